"""trace-planes on Dask gives exactly the serial numbers: a local cluster of 2 worker processes on
127.0.0.1 (``--workers 2``) and an already running one (``--scheduler ADDRESS``), on the demo and
on a generated set split into many spatial tiles.  Equality is the check: every trace draws from
its own random stream, so the split cannot change a number."""
from __future__ import annotations

import sys

import numpy as np
import pytest

from conftest import DEMO, ROOT, read_gpkg

distributed = pytest.importorskip("distributed")

sys.path.insert(0, str(ROOT / "bench"))


def _same(a, b, table):
    da, db = read_gpkg(a, table), read_gpkg(b, table)
    assert list(da.columns) == list(db.columns) and len(da) == len(db) > 0
    for c in da.columns:
        if c == "geometry":
            assert all(x.equals_exact(y, 0.0) for x, y in zip(da.geometry, db.geometry))
        elif da[c].dtype.kind == "f":
            np.testing.assert_array_equal(da[c].to_numpy(), db[c].to_numpy(), err_msg=f"{table}.{c}")
        else:
            assert da[c].tolist() == db[c].tolist(), f"{table}.{c}"


@pytest.fixture(scope="module")
def cluster():
    from dask.distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as c:
        yield c


@pytest.fixture(scope="module")
def generated(tmp_path_factory):
    import synth

    d = tmp_path_factory.mktemp("gen")
    dem = synth.write_dem(d / "dem.tif", 1200, 1200, 10.0, block=128, nodata_holes=3, seed=4)
    lines, _ = synth.plane_traces(120, 1200, 1200, 10.0, length_m=(300.0, 3000.0), seed=5)
    return dem, synth.write_traces(d / "traces.gpkg", lines)


def _run(cli, dem, traces, out, *extra, idf="fault_id"):
    code, stdout, err = cli("trace-planes", "--dem", dem, "--traces", traces, "--layer", "fault_traces",
                            "--id-field", idf, "--out", out, "--draws", "40", "--window", "800",
                            "--quiet", "--json", *extra)
    assert code == 0, err
    return stdout


def test_local_cluster_of_two_workers_equals_serial_on_the_demo(cli, tmp_path):
    dem, traces = str(DEMO / "dem.tif"), str(DEMO / "demo.gpkg")
    serial, dask = tmp_path / "serial.gpkg", tmp_path / "dask.gpkg"
    _run(cli, dem, traces, serial)
    _run(cli, dem, traces, dask, "--workers", "2")
    for table in ("trace_planes", "trace_windows"):
        _same(serial, dask, table)


def test_running_cluster_equals_serial_on_a_generated_set(cli, tmp_path, cluster, generated, monkeypatch):
    import slipsense.core.traces as core_traces

    # Small batches and tiles so the 120 traces go out as many tasks (planning is done here).
    monkeypatch.setattr(core_traces, "BATCH_POINTS", 600)
    monkeypatch.setattr(core_traces, "TILE_BATCHES", 2)
    dem, traces = generated
    serial, dask, threads = tmp_path / "s.gpkg", tmp_path / "d.gpkg", tmp_path / "t.gpkg"
    _run(cli, dem, traces, serial)
    _run(cli, dem, traces, dask, "--scheduler", cluster.scheduler_address)
    _run(cli, dem, traces, threads, "--threads", "2")
    for table in ("trace_planes", "trace_windows"):
        _same(serial, dask, table)
        _same(serial, threads, table)
    assert read_gpkg(serial, "trace_planes").n_nodata.sum() > 0  # the nodata lakes are crossed


def test_bad_cluster_options_are_one_line_errors(cli, tmp_path):
    dem, traces = str(DEMO / "dem.tif"), str(DEMO / "demo.gpkg")
    code, _, err = cli("trace-planes", "--dem", dem, "--traces", traces, "--layer", "fault_traces",
                       "--out", tmp_path / "x.gpkg", "--workers", "0", "--quiet")
    assert code == 2 and "workers must be >= 1" in err and "Traceback" not in err
    code, _, err = cli("trace-planes", "--dem", dem, "--traces", traces, "--layer", "fault_traces",
                       "--out", tmp_path / "y.gpkg", "--workers", "2", "--scheduler", "tcp://127.0.0.1:1", "--quiet")
    assert code == 2 and "not both" in err
