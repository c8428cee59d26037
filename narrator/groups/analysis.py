"""Several variables from one file, optionally broken down by a grouping column.

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`VariableRequest`       one variable to read and describe (:mod:`narrator.request`)
:class:`GroupPart`             one shown group of one variable: sample, findings
:class:`VariablePart`          one variable: overall sample and findings, groups
:class:`Collection`            every variable of one report
:func:`split_by_group`         a sample cut into groups, small groups suppressed
:func:`suppressed_labels`      the groups too small for any variable
:func:`analyse_file`           read, group and describe every variable of a file
:func:`group_order`            the order groups are shown in (:mod:`narrator.engine.separation`)
:func:`compare_parts`          the shown groups of one variable compared pair by pair
:data:`DEFAULT_PRIVACY_THRESHOLD` groups with fewer values are suppressed
=============================  ================================================

Privacy rule (common practice in public reporting, which suppresses cells of
fewer than 10 or 11): a group is suppressed when, for any variable of the
report, it holds fewer than ``privacy_threshold`` usable values. Suppressing
a group for the whole report (not per variable) keeps one set of groups
throughout, so a reader cannot recover a small group by comparing tables.
A suppressed group's values are taken out of everything, the overall figures
included: its label, values and rows reach no table, figure, sentence or
sidecar; only the number of suppressed groups is reported. Values whose
grouping cell is blank stay in the overall figures and belong to no group.

Groups compared: every pair of shown groups by :func:`narrator.engine.group_difference.compare_groups`,
with the overall findings' lead measure and interval level (``VariablePart.comparison``).

Clusters checked against the file's categorical columns: :mod:`narrator.engine.separation`
(the grouping column and the file's text columns, read by
:func:`narrator.reading.columns.label_columns`).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np

from narrator.engine.separation import (  # noqa: F401 (SEPARATION_LAMBDA: the rule's public constant)
    DEFAULT_PRIVACY_THRESHOLD,
    MAX_COLUMNS_CHECKED,
    SEPARATION_LAMBDA,
    check_separation,
    group_order,
    labels_of,
)
from narrator.errors import NarratorError
from narrator.findings import Findings, GroupComparison
from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings
from narrator.reading.sample import Sample
from narrator.request import ColumnRequest, ReadingOptions, VariableRequest, describe_options, read_sample


@dataclass(frozen=True, slots=True)
class GroupPart:
    label: str
    sample: Sample
    findings: Findings


@dataclass(frozen=True, slots=True)
class VariablePart:
    sample: Sample
    findings: Findings
    groups: tuple[GroupPart, ...] = ()
    suppressed_groups: int = 0
    ungrouped_values: int = 0
    comparison: GroupComparison | None = None


@dataclass(frozen=True, slots=True)
class Collection:
    variables: tuple[VariablePart, ...]
    group_by: str | None = None
    privacy_threshold: int | None = None

    def findings_set(self, baselines: Sequence[Findings | None] = (),
                     group_baselines: Sequence[tuple[GroupFindings, ...]] = ()) -> FindingsSet:
        """What the sidecar records: findings only, suppressed groups as a count.

        ``baselines`` gives, per variable, the earlier findings this build is
        compared with (None where there are none); ``group_baselines`` the shown
        groups of that same earlier build (empty where there are none).
        """
        chosen = tuple(baselines) + (None,) * (len(self.variables) - len(baselines))
        earlier_groups = tuple(group_baselines) + ((),) * (len(self.variables) - len(group_baselines))
        return FindingsSet(
            variables=tuple(
                VariableFindings(
                    findings=part.findings,
                    groups=tuple(GroupFindings(group.label, group.findings) for group in part.groups),
                    suppressed_groups=part.suppressed_groups,
                    ungrouped_values=part.ungrouped_values,
                    baseline=baseline,
                    comparison=part.comparison,
                    group_baselines=tuple(earlier) if baseline is not None else (),
                )
                for part, baseline, earlier in zip(self.variables, chosen, earlier_groups, strict=True)
            ),
            group_by=self.group_by,
            privacy_threshold=self.privacy_threshold,
        )


def _group_counts(sample: Sample, labels: Sequence[str | None]) -> dict[str, int]:
    counts: dict[str, int] = {}
    for label in labels_of(sample, labels):
        if label is not None:
            counts[label] = counts.get(label, 0) + 1
    return counts


def suppressed_labels(samples: Sequence[Sample], labels: Sequence[str | None], threshold: int) -> frozenset[str]:
    """Labels of the groups that hold fewer than ``threshold`` usable values for any of ``samples``.

    A group with no usable value at all for a variable counts as holding zero.
    """
    every = {label for label in labels if label is not None}
    small: set[str] = set()
    for sample in samples:
        counts = _group_counts(sample, labels)
        small |= {label for label in every if counts.get(label, 0) < threshold}
    return frozenset(small)


def _subset(sample: Sample, keep: np.ndarray, *, dropped_rows_count: int = 0) -> Sample:
    return replace(
        sample,
        values=sample.values[keep],
        rows=sample.rows[keep],
        n_rows=max(0, sample.n_rows - dropped_rows_count),
    )


def split_by_group(
    sample: Sample, labels: Sequence[str | None], suppressed: frozenset[str]
) -> tuple[Sample, list[tuple[str, Sample]], int]:
    """(overall sample without the suppressed groups, [(label, group sample)], values with no label).

    The overall sample loses the suppressed groups' values, and its rows-read
    count loses them too, so no count in the report reveals their size.
    Group samples carry only their own values; their rows-read count is their
    number of values (missing cells are not attributed to groups).
    """
    row_labels = labels_of(sample, labels)
    hidden = np.fromiter((label in suppressed for label in row_labels), dtype=bool, count=len(row_labels))
    overall = _subset(sample, ~hidden, dropped_rows_count=int(hidden.sum()))
    if hidden.any():
        # Said in the report (the rows read and left out are those of the groups shown): how many groups,
        # never how many rows.
        hidden_groups = {label for label, drop in zip(row_labels, hidden, strict=True) if drop}
        overall = replace(overall, source={**(overall.source or {}), "suppressed_groups": len(hidden_groups)})
    kept_labels = [label for label, drop in zip(row_labels, hidden, strict=True) if not drop]
    groups = []
    for label in group_order([label for label in kept_labels if label is not None]):
        mask = np.fromiter((item == label for item in kept_labels), dtype=bool, count=len(kept_labels))
        part = replace(
            overall, values=overall.values[mask], rows=overall.rows[mask], n_rows=int(mask.sum()), exclusions=()
        )
        groups.append((label, part))
    ungrouped = sum(1 for label in kept_labels if label is None)
    return overall, groups, ungrouped


def analyse_file(
    path: str | os.PathLike[str],
    variables: Sequence[VariableRequest],
    *,
    reading: ReadingOptions | None = None,
    group_by: str | None = None,
    privacy_threshold: int = DEFAULT_PRIVACY_THRESHOLD,
    step: Callable[[str], None] | None = None,
) -> Collection:
    """Read every variable of ``path`` the way ``reading`` says, split by ``group_by`` when given, describe each part.

    Every variable is one :class:`~narrator.request.ColumnRequest` read by the memory engine
    (:func:`narrator.request.engine_for` refuses another one with grouping or several variables).
    ``step`` is called with a short description before each piece of work (for a progress
    display). Each group is described with the variable's own settings (bounds, valid range,
    outlier rule), so groups and the whole are judged the same way.
    """
    from narrator.engine.describe import describe
    from narrator.reading.columns import read_labels
    from narrator.request import engine_for

    reading = reading or ReadingOptions()
    if not variables:
        raise NarratorError("a report needs at least one variable")
    if isinstance(privacy_threshold, bool) or not isinstance(privacy_threshold, int) or privacy_threshold < 1:
        raise NarratorError(f"the privacy threshold must be a whole number of at least 1, not {privacy_threshold!r}")
    requests = [ColumnRequest(path, variable, reading) for variable in variables]
    engine_for(requests[0], group_by=group_by, variables=len(requests))
    announce = step or (lambda _what: None)
    samples = []
    for request in requests:
        announce(f"reading {request.variable.column}")
        samples.append(read_sample(request))
    labels: tuple[str | None, ...] = ()
    group_column = None
    suppressed: frozenset[str] = frozenset()
    if group_by is not None:
        announce(f"reading {group_by}")
        group_column, labels = read_labels(path, group_by, sheet=reading.sheet, missing=reading.missing,
                                           encoding=reading.encoding)
        # Impossible values are excluded before counting, as describe() would exclude them.
        counted = [_within_bounds(sample, request) for sample, request in zip(samples, variables, strict=True)]
        suppressed = suppressed_labels(counted, labels, privacy_threshold)

    def run(sample: Sample, request: VariableRequest) -> Findings:
        return describe(sample, **describe_options(request))

    label_columns: list[tuple[str, tuple[str | None, ...]]] | None = None

    def separated(found: Findings, sample: Sample) -> Findings:
        nonlocal label_columns
        if found.clusters is None or found.clusters.count < 2:
            return found
        if label_columns is None:
            label_columns = _label_columns(path, reading, group_column, labels,
                                           [str(request.column) for request in variables])
        return check_separation(found, sample, label_columns, privacy_threshold)

    parts = []
    for sample, request in zip(samples, variables, strict=True):
        name = request.label or sample.name
        if group_column is None:
            announce(f"describing {name}")
            parts.append(VariablePart(sample, separated(run(sample, request), sample)))
            continue
        overall, groups, ungrouped = split_by_group(sample, labels, suppressed)
        announce(f"describing {name}")
        group_parts = []
        for label, group_sample in groups:
            announce(f"describing {name}, {group_column} {label}")
            group_parts.append(GroupPart(label, group_sample, run(group_sample, request)))
        overall_findings = separated(run(overall, request), overall)
        announce(f"comparing the groups of {name}")
        parts.append(VariablePart(
            overall, overall_findings, tuple(group_parts), len(suppressed), ungrouped,
            compare_parts(overall_findings, group_parts),
        ))
    return Collection(
        variables=tuple(parts),
        group_by=group_column,
        privacy_threshold=privacy_threshold if group_column is not None else None,
    )


def _within_bounds(sample: Sample, request: VariableRequest) -> Sample:
    """The sample without the values describe() will exclude as impossible (for counting group sizes).

    The same rule as :func:`narrator.engine.describe.describe`: a bound the
    quantity cannot cross also limits the valid range. Counting on these
    values keeps the threshold honest: a group does not pass it on values
    the report will not use.
    """
    low = [limit for limit in (request.valid_min, request.lower_bound) if limit is not None]
    high = [limit for limit in (request.valid_max, request.upper_bound) if limit is not None]
    keep = np.ones(sample.values.size, dtype=bool)
    if low:
        keep &= sample.values >= max(low)
    if high:
        keep &= sample.values <= min(high)
    return sample if keep.all() else replace(sample, values=sample.values[keep], rows=sample.rows[keep])


def compare_parts(overall: Findings, groups: Sequence[GroupPart]) -> GroupComparison | None:
    """The shown groups compared pair by pair with the overall findings' lead measure and level."""
    from narrator.engine.group_difference import compare_groups

    if overall.center is None:
        return None
    return compare_groups([(group.label, group.sample.values, group.findings) for group in groups],
                          lead=overall.center.lead, level=float(overall.options.get("level", 0.95)),
                          population=overall.variable.population)


def _label_columns(path, reading: ReadingOptions, group_column, group_labels,
                   variable_columns: Sequence[str]) -> list[tuple[str, tuple[str | None, ...]]]:
    """The grouping column (with the labels already read) and the file's other text columns, read as labels."""
    from narrator.reading.columns import label_columns

    found = [(group_column, tuple(group_labels))] if group_column is not None else []
    return found + label_columns(path, sheet=reading.sheet, decimal_comma=reading.decimal_comma,
                                 missing=reading.missing, encoding=reading.encoding,
                                 leave_out=(group_column, *variable_columns), limit=MAX_COLUMNS_CHECKED - len(found))
