"""The memo's findings (narrator.engine.decision) from the engine that reads in passes.

Reference: the in-memory engine on the same values (itself checked against outside references in
tests/engine). Generated data (fixed seeds), written as Parquet part files: a two-cluster mixture
with a typed digit too many and values outside the valid range. With every value in the
fixed-seed sample the stream engine gives the same clusters, unusual values, concentration and middle
value above the lowest one;
with a smaller sample it computes the unusual values the same way (they read only the findings)
and records the others as not computed, with the reason.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from narrator.engine.decision import NOT_IN_PASSES
from narrator.engine.describe import describe
from narrator.reading.columns import read_column
from narrator.scale import describe_source, open_source


def _parts(folder, values, parts=4):
    folder.mkdir()
    for k, part in enumerate(np.array_split(values, parts)):
        pq.write_table(pa.table({"minutes": pa.array(part)}), folder / f"part-{k}.parquet")
    whole = folder.parent / "whole.parquet"
    pq.write_table(pa.table({"minutes": pa.array(values)}), whole)
    return whole


def _values(size=3000, seed=12):
    rng = np.random.default_rng(seed)
    short = rng.random(size) < 0.6
    values = np.where(short, rng.normal(15, 3, size), rng.normal(65, 6, size)).round(1)
    values[17] = 151.0  # a digit too many for 15.1
    values[[40, 41]] = [-4.0, 900.0]  # outside the valid range 0..600
    return values


def test_whole_sample_gives_the_same_memo_findings(tmp_path):
    whole = _parts(tmp_path / "parts", _values())
    memory = describe(read_column(whole, "minutes", valid_min=0, valid_max=600), valid_min=0, valid_max=600)
    streamed = describe_source(open_source(tmp_path / "parts", "minutes", chunk_rows=500, valid_min=0,
                                           valid_max=600), valid_min=0, valid_max=600).findings
    assert memory.clusters.count == 2
    assert streamed.clusters == memory.clusters
    assert streamed.concentration == memory.concentration
    assert streamed.above_minimum == memory.above_minimum is not None
    assert streamed.below_maximum == memory.below_maximum is not None
    assert streamed.unusual == memory.unusual
    assert streamed.not_computed == memory.not_computed == {}
    impossible = streamed.quality.get("impossible")
    assert impossible.values == memory.quality.get("impossible").values == (-4.0, 900.0)


def test_partial_sample_records_what_it_did_not_compute(tmp_path):
    whole = _parts(tmp_path / "parts", _values())
    # Tukey's fences come from the exact quartiles, so what stands out cannot depend on the sample.
    memory = describe(read_column(whole, "minutes"), outlier_rule="tukey")
    streamed = describe_source(open_source(tmp_path / "parts", "minutes", chunk_rows=500), outlier_rule="tukey",
                               reservoir_size=1000).findings
    assert streamed.clusters is None and streamed.concentration is None and streamed.above_minimum is None
    assert streamed.below_maximum is None
    assert streamed.not_computed == {"clusters": NOT_IN_PASSES, "concentration": NOT_IN_PASSES,
                                     "above_minimum": NOT_IN_PASSES, "below_maximum": NOT_IN_PASSES}
    assert streamed.unusual == memory.unusual
    assert 900.0 in streamed.unusual.values  # far beyond the far-out fence of values below 100
