"""Whether a categorical column of the file separates the clusters the values form.

No file is read here: the labels come from :func:`narrator.reading.columns.label_columns`.

Clusters (where the values form two or more, :mod:`narrator.engine.clusters`) are checked against
the grouping column and every text column (at most ``MAX_COLUMNS_CHECKED``). A column
*separates* the clusters when it has 2 to ``MAX_CATEGORIES`` categories, at least
``MIN_LABELLED_SHARE`` of the values have a category, and Goodman and Kruskal's lambda (1954,
*JASA* 49, "Measures of association for cross classifications": the share of the errors of
guessing the most common cluster for every value that knowing the category removes) is at
least ``SEPARATION_LAMBDA`` (0.8, our threshold). Categories with fewer values than the privacy
threshold are counted, never named.

The privacy threshold (common practice in public reporting, which suppresses cells of fewer than
10 or 11) is :data:`DEFAULT_PRIVACY_THRESHOLD`; :mod:`narrator.groups.analysis` applies it to groups.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from narrator.engine.clusters import cluster_of
from narrator.errors import NarratorError
from narrator.findings import ColumnSeparation, Findings
from narrator.reading.sample import Sample

DEFAULT_PRIVACY_THRESHOLD = 10
MAX_CATEGORIES = 12  # a column with more categories is not a grouping a reader can act on
MAX_COLUMNS_CHECKED = 10
MIN_LABELLED_SHARE = 0.8
SEPARATION_LAMBDA = 0.8


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


def labels_of(sample: Sample, labels: Sequence[str | None]) -> list[str | None]:
    # Sample rows are spreadsheet rows (header row 1), so data position = row - 2.
    positions = np.asarray(sample.rows, dtype=np.int64) - 2
    if positions.size and (positions.min() < 0 or positions.max() >= len(labels)):
        raise NarratorError(f"{sample.name}: the grouping column has fewer rows than the data column")
    return [labels[int(k)] for k in positions]


def cluster_separation(sample: Sample, cuts: Sequence[float], column: str, labels: Sequence[str | None],
                       privacy_threshold: int) -> ColumnSeparation:
    """Whether the categories of ``labels`` (one per data row) separate the clusters split at ``cuts``.

    See the module docstring for the rule. Categories are listed in :func:`group_order`.
    """
    row_labels = labels_of(sample, labels)
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
