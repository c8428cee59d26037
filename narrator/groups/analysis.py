"""Several variables from one file, optionally broken down by a grouping column.

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`VariableRequest`       one variable to read and describe, as declared
:class:`GroupPart`             one shown group of one variable: sample, findings
:class:`VariablePart`          one variable: overall sample and findings, groups
:class:`Collection`            every variable of one report
:func:`split_by_group`         a sample cut into groups, small groups suppressed
:func:`suppressed_labels`      the groups too small for any variable
:func:`analyse_file`           read, group and describe every variable of a file
:func:`group_order`            the order groups are shown in
:func:`compare_parts`          the shown groups of one variable compared pair by pair
:func:`cluster_separation`     whether one categorical column separates the clusters
:func:`check_separation`       the file's categorical columns checked against the clusters
:func:`separation_in_file`     the same for a report on one column of a file
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

Clusters checked against the file's categorical columns (where the values form two or more
clusters, :mod:`narrator.engine.clusters`): the grouping column and every text column
(:func:`narrator.reading.columns.list_label_columns`, at most ``MAX_COLUMNS_CHECKED``). A column
*separates* the clusters when it has 2 to ``MAX_CATEGORIES`` categories, at least
``MIN_LABELLED_SHARE`` of the values have a category, and Goodman and Kruskal's lambda (1954,
*JASA* 49, "Measures of association for cross classifications": the share of the errors of
guessing the most common cluster for every value that knowing the category removes) is at
least ``SEPARATION_LAMBDA`` (0.8, our threshold). Categories with fewer values than the privacy
threshold are counted, never named.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np

from narrator.errors import NarratorError
from narrator.findings import ColumnSeparation, Findings, GroupComparison
from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings
from narrator.reading.sample import Sample

DEFAULT_PRIVACY_THRESHOLD = 10
MAX_CATEGORIES = 12  # a column with more categories is not a grouping a reader can act on
MAX_COLUMNS_CHECKED = 10
MIN_LABELLED_SHARE = 0.8
SEPARATION_LAMBDA = 0.8


@dataclass(frozen=True, slots=True)
class VariableRequest:
    """One variable as a recipe or the command line declares it (see :func:`describe`)."""

    column: str | int
    label: str | None = None
    unit: str | None = None
    valid_min: float | None = None
    valid_max: float | None = None
    lower_bound: float | None = None
    upper_bound: float | None = None
    population: bool = False
    outlier_rule: str | None = None


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

    def findings_set(self, baselines: Sequence[Findings | None] = ()) -> FindingsSet:
        """What the sidecar records: findings only, suppressed groups as a count.

        ``baselines`` gives, per variable, the earlier findings this build is
        compared with (None where there are none).
        """
        chosen = tuple(baselines) + (None,) * (len(self.variables) - len(baselines))
        return FindingsSet(
            variables=tuple(
                VariableFindings(
                    findings=part.findings,
                    groups=tuple(GroupFindings(group.label, group.findings) for group in part.groups),
                    suppressed_groups=part.suppressed_groups,
                    ungrouped_values=part.ungrouped_values,
                    baseline=baseline,
                    comparison=part.comparison,
                )
                for part, baseline in zip(self.variables, chosen, strict=True)
            ),
            group_by=self.group_by,
            privacy_threshold=self.privacy_threshold,
        )


def group_order(labels: Sequence[str]) -> list[str]:
    """Distinct labels in reading order: by number when every label is a number, else alphabetically.

    >>> group_order(["10", "9", "B", "a"])
    ['10', '9', 'a', 'B']
    >>> group_order(["10", "9", "5"])
    ['5', '9', '10']
    """
    distinct = sorted(set(labels))
    try:
        return sorted(distinct, key=lambda label: (float(label), label))
    except ValueError:
        return sorted(distinct, key=lambda label: (label.casefold(), label))


def _labels_of(sample: Sample, labels: Sequence[str | None]) -> list[str | None]:
    # Sample rows are spreadsheet rows (header row 1), so data position = row - 2.
    positions = np.asarray(sample.rows, dtype=np.int64) - 2
    if positions.size and (positions.min() < 0 or positions.max() >= len(labels)):
        raise NarratorError(f"{sample.name}: the grouping column has fewer rows than the data column")
    return [labels[int(k)] for k in positions]


def _group_counts(sample: Sample, labels: Sequence[str | None]) -> dict[str, int]:
    counts: dict[str, int] = {}
    for label in _labels_of(sample, labels):
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
    row_labels = _labels_of(sample, labels)
    hidden = np.fromiter((label in suppressed for label in row_labels), dtype=bool, count=len(row_labels))
    overall = _subset(sample, ~hidden, dropped_rows_count=int(hidden.sum()))
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
    sheet: str | int | None = None,
    decimal_comma: bool = False,
    missing: Sequence[object] = (),
    group_by: str | None = None,
    privacy_threshold: int = DEFAULT_PRIVACY_THRESHOLD,
    step: Callable[[str], None] | None = None,
) -> Collection:
    """Read every variable of ``path``, split by ``group_by`` when given, and describe each part.

    ``step`` is called with a short description before each piece of work
    (for a progress display). Each group is described with the variable's own
    settings (bounds, valid range, outlier rule), so groups and the whole are
    judged the same way.
    """
    from narrator.engine.describe import describe
    from narrator.reading.columns import read_column, read_labels

    if not variables:
        raise NarratorError("a report needs at least one variable")
    if isinstance(privacy_threshold, bool) or not isinstance(privacy_threshold, int) or privacy_threshold < 1:
        raise NarratorError(f"the privacy threshold must be a whole number of at least 1, not {privacy_threshold!r}")
    announce = step or (lambda _what: None)
    samples = []
    for request in variables:
        announce(f"reading {request.column}")
        samples.append(read_column(
            path, request.column, sheet=sheet, unit=request.unit, decimal_comma=decimal_comma,
            missing=tuple(missing), valid_min=request.valid_min, valid_max=request.valid_max,
        ))
    labels: tuple[str | None, ...] = ()
    group_column = None
    suppressed: frozenset[str] = frozenset()
    if group_by is not None:
        announce(f"reading {group_by}")
        group_column, labels = read_labels(path, group_by, sheet=sheet, missing=tuple(missing))
        # Impossible values are excluded before counting, as describe() would exclude them.
        counted = [_within_bounds(sample, request) for sample, request in zip(samples, variables, strict=True)]
        suppressed = suppressed_labels(counted, labels, privacy_threshold)

    def run(sample: Sample, request: VariableRequest) -> Findings:
        # Limits as floats, so the findings (and their JSON) are the same whether 0 or 0.0 was given.
        limits = {key: None if value is None else float(value) for key, value in (
            ("valid_min", request.valid_min), ("valid_max", request.valid_max),
            ("lower_bound", request.lower_bound), ("upper_bound", request.upper_bound))}
        return describe(sample, name=request.label, population=request.population,
                        outlier_rule=request.outlier_rule, **limits)

    label_columns: list[tuple[str, tuple[str | None, ...]]] | None = None

    def separated(found: Findings, sample: Sample) -> Findings:
        nonlocal label_columns
        if found.clusters is None or found.clusters.count < 2:
            return found
        if label_columns is None:
            label_columns = _label_columns(path, sheet, decimal_comma, missing, group_column, labels,
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


def cluster_separation(sample: Sample, cuts: Sequence[float], column: str, labels: Sequence[str | None],
                       privacy_threshold: int) -> ColumnSeparation:
    """Whether the categories of ``labels`` (one per data row) separate the clusters split at ``cuts``.

    See the module docstring for the rule. Categories are listed in :func:`group_order`.
    """
    from narrator.engine.clusters import cluster_of

    row_labels = _labels_of(sample, labels)
    named = np.fromiter((label is not None for label in row_labels), dtype=bool, count=len(row_labels))
    n_labelled = int(named.sum())
    kept = [label for label in row_labels if label is not None]
    categories = group_order(kept)

    def result(separates: bool, reason: str, **extra) -> ColumnSeparation:
        return ColumnSeparation(column=column, separates=separates, reason=reason, n_labelled=n_labelled,
                                n_categories=len(categories), **extra)

    if len(categories) > MAX_CATEGORIES:
        return result(False, "too_many_categories")
    if len(categories) < 2:
        return result(False, "one_category")
    if n_labelled < MIN_LABELLED_SHARE * sample.values.size:
        return result(False, "too_few_labelled")
    clusters = cluster_of(sample.values[named], cuts)
    index = {label: k for k, label in enumerate(categories)}
    category_of = np.fromiter((index[label] for label in kept), dtype=np.int64, count=n_labelled)
    table = np.zeros((len(categories), len(cuts) + 1), dtype=np.int64)
    np.add.at(table, (category_of, clusters), 1)
    best_overall = int(table.sum(axis=0).max())
    best_within = int(table.max(axis=1).sum())
    association = (best_within - best_overall) / (n_labelled - best_overall) if n_labelled > best_overall else 0.0
    sizes = table.sum(axis=1)
    listed = tuple((label, int(table[k].argmax()), int(sizes[k]))
                   for k, label in enumerate(categories) if sizes[k] >= privacy_threshold)
    separates = association >= SEPARATION_LAMBDA
    return result(separates, "separates" if separates else "weak_association", agreement=best_within / n_labelled,
                  association=association, categories=listed, small_categories=len(categories) - len(listed))


def check_separation(findings: Findings, sample: Sample, columns: Sequence[tuple[str, Sequence[str | None]]],
                     privacy_threshold: int) -> Findings:
    """``findings`` with ``clusters.separation`` filled from the (column, labels) pairs given."""
    clusters = findings.clusters
    if clusters is None or clusters.count < 2:
        return findings
    checked = tuple(cluster_separation(sample, clusters.cuts, column, labels, privacy_threshold)
                    for column, labels in columns)
    return replace(findings, clusters=replace(clusters, separation=checked, separation_checked=True))


def separation_in_file(findings: Findings, sample: Sample, path: str | os.PathLike[str], *,
                       sheet: str | int | None = None, decimal_comma: bool = False, missing: Sequence[object] = (),
                       privacy_threshold: int = DEFAULT_PRIVACY_THRESHOLD) -> Findings:
    """For a report on one column of ``path``: the clusters checked against the file's text columns."""
    if findings.clusters is None or findings.clusters.count < 2:
        return findings
    column = sample.source.get("column")
    columns = _label_columns(path, sheet, decimal_comma, missing, None, (), [column] if column else [])
    return check_separation(findings, sample, columns, privacy_threshold)


def _label_columns(path, sheet, decimal_comma, missing, group_column, group_labels,
                   variable_columns: Sequence[str]) -> list[tuple[str, tuple[str | None, ...]]]:
    """The grouping column (with the labels already read) and the file's other text columns, read as labels."""
    from narrator.reading.columns import list_label_columns, read_labels

    found: list[tuple[str, tuple[str | None, ...]]] = []
    if group_column is not None:
        found.append((group_column, tuple(group_labels)))
    for header in list_label_columns(path, sheet=sheet, decimal_comma=decimal_comma):
        if len(found) >= MAX_COLUMNS_CHECKED:
            break
        if header in (group_column, *variable_columns) or not header:
            continue
        found.append(read_labels(path, header, sheet=sheet, missing=tuple(missing)))
    return found
