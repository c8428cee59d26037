"""What changed between two builds is said only beyond the numbers' uncertainty: spread and shape.

By construction (fixed seeds): two samples of one gamma shape differ in IQR and in skewness strength by
chance alone, and no change is said; a spread that truly doubled and a shape that truly changed are said.
The gates' formulas are in narrator.history.changes (the large-sample variance of ln s, from memory; the
standard error of G1 each build reports).
"""

from __future__ import annotations

import numpy as np

from narrator.engine.describe import describe
from narrator.history.changes import compare


def _item(changes, key):
    return changes.item(key)


def test_two_samples_of_one_shape_are_not_called_a_change_of_spread_or_shape():
    old = describe(np.random.default_rng(31).gamma(3, 6, 300).round(0), unit="days")
    new = describe(np.random.default_rng(32).gamma(3, 6, 150).round(0), unit="days")
    assert (old.spread.iqr, new.spread.iqr) == (15.0, 11.0)  # 27% narrower by chance
    assert (old.shape.strength, new.shape.strength) == ("moderate", "strong")
    changes = compare(old, new)
    assert not _item(changes, "spread.iqr").mention and _item(changes, "spread.iqr").reason == "within_uncertainty"
    assert not _item(changes, "spread.sd").mention
    assert not _item(changes, "shape.strength").mention and _item(changes, "shape.strength").reason == "strength_only"


def test_a_spread_that_doubled_and_a_shape_that_changed_are_said():
    rng = np.random.default_rng(7)
    old = describe(rng.normal(50, 5, 300), unit="days")
    wide = describe(rng.normal(50, 10, 300), unit="days")
    changes = compare(old, wide)
    assert _item(changes, "spread.sd").mention and _item(changes, "spread.iqr").mention
    skewed = describe(rng.lognormal(np.log(50), 0.8, 300), unit="days")
    assert (old.shape.label, skewed.shape.label) == ("symmetric", "right-skewed")
    assert _item(compare(old, skewed), "shape.label").mention


def test_whole_populations_keep_the_share_rules():
    old = describe(np.random.default_rng(31).gamma(3, 6, 300).round(0), unit="days", population=True)
    new = describe(np.random.default_rng(32).gamma(3, 6, 150).round(0), unit="days", population=True)
    changes = compare(old, new)
    assert _item(changes, "spread.iqr").mention and _item(changes, "shape.strength").mention
