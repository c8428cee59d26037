"""One grouped findings set built in memory, the way the groups analysis builds it (for phrasing tests)."""

from __future__ import annotations

import numpy as np

from narrator.engine.describe import describe
from narrator.engine.group_difference import compare_groups
from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings


def grouped_set(groups: dict[str, np.ndarray], *, name: str, unit: str, group_by: str, threshold: int = 10,
                **options) -> FindingsSet:
    """Groups below ``threshold`` values are left out (and counted as suppressed); the rest are described with
    ``options`` and compared on the overall lead measure."""
    shown = {label: values for label, values in groups.items() if values.size >= threshold}
    overall = describe(np.concatenate(list(shown.values())), name=name, unit=unit, **options)
    parts = tuple(GroupFindings(label, describe(values, name=name, unit=unit, **options))
                  for label, values in shown.items())
    comparison = compare_groups([(part.label, shown[part.label], part.findings) for part in parts],
                                lead=overall.center.lead, population=bool(options.get("population")))
    item = VariableFindings(findings=overall, groups=parts, suppressed_groups=len(groups) - len(shown),
                            comparison=comparison)
    return FindingsSet(variables=(item,), group_by=group_by, privacy_threshold=threshold)
