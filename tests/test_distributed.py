"""Distributed runs on Dask (costing.distributed) give the single-process run's workbook.

Oracle: the single-process `costing run` of the same input (costing.pipeline.run, one process,
no shards), compared cell by cell with openpyxl, SOURCE_DATE_EPOCH fixed. The Run sheet's work
counters (searches, nodes settled and pushed, compact networks built, batched searches) are left
out: each shard builds its own networks and batches its own searches, so they are sums over
shards (costing/distributed.py says so); with SOURCE_DATE_EPOCH set no timing rows are written.
Inputs: the invented Hollowmere example (costing.example), changed in the test."""

from __future__ import annotations

import datetime as _dt
import os
import sys

import openpyxl
import pytest

from costing import distributed, pipeline
from costing.example import write_example

WORK_COUNTERS = {"searches (A*)", "nodes settled", "nodes pushed", "compact networks built",
                 "batched searches"}


def _cells(path: str) -> dict:
    wb = openpyxl.load_workbook(path)
    try:
        out = {}
        for ws in wb.worksheets:
            for row in ws.iter_rows():
                for c in row:
                    if ws.title == "Run":
                        label = ws.cell(c.row, 1).value
                        if label in WORK_COUNTERS:
                            continue
                        out[("Run", label, c.column)] = c.value  # Run rows by their label
                    else:
                        out[(ws.title, c.coordinate)] = c.value
        return out
    finally:
        wb.close()


@pytest.fixture
def threads_cluster(monkeypatch):
    """`costing run --workers N` on a LocalCluster of N thread workers (quick to start) instead of
    processes; dask is part of the test extras, so CI runs these tests."""
    pytest.importorskip("dask.distributed", reason="dask[distributed] not installed: pip install -e "
                        "'.[test]' (it is in the test extras)")
    made = []
    real = distributed.local_client

    def local(workers: int, processes: bool = True):
        made.append(real(workers, processes=False))
        return made[-1]

    monkeypatch.setattr(distributed, "local_client", local)
    return made


@pytest.fixture(autouse=True)
def _fixed_epoch(monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")


def _edit(path: str, consolidate: str | None = None, blank_ready: tuple[str, ...] = ()) -> None:
    wb = openpyxl.load_workbook(path)
    if consolidate:
        ws = wb["Settings"]
        for r in range(2, ws.max_row + 1):
            if ws.cell(r, 1).value == "consolidate":
                ws.cell(r, 2).value = consolidate
                break
        else:
            ws.append(["consolidate", consolidate])
    ws = wb["Shipments"]
    head = [c.value for c in ws[1]]
    col = head.index("ready_date") + 1
    for r in range(2, ws.max_row + 1):
        if ws.cell(r, 1).value in blank_ready:
            ws.cell(r, col).value = None
    wb.save(path)


def test_shards_hold_whole_days(tmp_path):
    path = str(tmp_path / "in.xlsx")
    write_example(path)
    model, _p, _ = pipeline.load(path)
    days = {s.ready_date for s in model.shipments}
    assert len(days) == 3  # the example's week: ready dates over three days
    for count in (1, 2, 5):
        shards = distributed.make_shards(model, count)
        assert sorted(i for part in shards for i in part) == list(range(len(model.shipments)))
        owner = {}
        for n, part in enumerate(shards):
            for i in part:
                assert owner.setdefault(model.shipments[i].ready_date, n) == n  # a day is in one shard
    # consolidate = no: (day, origin) groups, the first day whole when a ready date is blank
    _edit(path, consolidate="no", blank_ready=("S001",))
    model, _p, _ = pipeline.load(path)
    groups = distributed.shard_groups(model)
    first = min(s.ready_date for s in model.shipments if s.ready_date)
    assert len(groups) > 3
    whole = [g for g in groups if any((model.shipments[i].ready_date or first) == first for i in g)]
    assert len(whole) == 1 and len(whole[0]) == sum((s.ready_date or first) == first for s in model.shipments)


@pytest.mark.parametrize("case", ["example", "consolidate_no"])
def test_workbook_equals_single_process_run(tmp_path, cli, threads_cluster, monkeypatch, case):
    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    if case == "consolidate_no":
        _edit(inp, consolidate="no", blank_ready=("S001", "S020", "S040"))
        real = distributed.make_shards
        monkeypatch.setattr(distributed, "make_shards", lambda m, n: real(m, 7))  # more shards than days
    one, two = str(tmp_path / "one.xlsx"), str(tmp_path / "two.xlsx")
    assert cli("run", inp, "-o", one, "--quiet")[0] == 0
    code, _out, err = cli("run", inp, "-o", two, "--workers", "2")
    assert code == 0, err
    assert "running on Dask: 2 workers" in err and len(threads_cluster) == 1
    a, b = _cells(one), _cells(two)
    assert a.keys() == b.keys()
    differ = {k: (a[k], b[k]) for k in a if a[k] != b[k]}
    assert differ == {}
    runs = [v for k, v in a.items() if k[0] == "Vehicle runs" and isinstance(v, str) and v.startswith("R0")]
    assert len(runs) > 40  # vehicle runs renumbered R0001... as in the single run


def test_gather_orders_runs_by_day(tmp_path):
    pytest.importorskip("dask.distributed", reason="dask[distributed] not installed")
    path = str(tmp_path / "in.xlsx")
    write_example(path)
    model, _p, _ = pipeline.load(path)
    client = distributed.local_client(2, processes=False)
    try:
        costed = distributed.run(model, pipeline.Options(analyses=False, scenarios=False), client, shards=3)
    finally:
        cluster = client.cluster
        client.close()
        cluster.close()
    days = [r.day for r in costed.runs]
    assert days == sorted(days) and [r.run_id for r in costed.runs] == [
        f"R{k:04d}" for k in range(1, len(costed.runs) + 1)]
    named = {g.run_id for r in costed.results for g in r.legs}
    assert named == {r.run_id for r in costed.runs}
    assert all(isinstance(d, _dt.date) for d in days)


def test_without_dask_the_option_says_how_to_install(tmp_path, cli, monkeypatch):
    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    monkeypatch.setitem(sys.modules, "dask.distributed", None)  # import fails as if not installed
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "o.xlsx"), "--workers", "2")
    assert code == 2 and "pip install" in err and "dask" in err
    assert not os.path.exists(tmp_path / "o.xlsx")
    code, _out, err = cli("run", inp, "-o", str(tmp_path / "o.xlsx"), "--workers", "0")
    assert code == 2 and "--workers" in err


def test_benchmark_quick_run_on_worker_processes(capsys):
    # benchmarks/bench_distributed.py at a tiny size, on a LocalCluster of worker processes (the
    # command line's default): it checks itself that every result equals the single-process run
    pytest.importorskip("dask.distributed", reason="dask[distributed] not installed")
    from benchmarks import bench_distributed

    rows = bench_distributed.main(["--nodes", "400", "--shipments", "150", "--origins", "5",
                                   "--workers", "2"])
    out = capsys.readouterr().out
    assert [name for name, _s in rows] == ["single process (pipeline.run)", "Dask, 2 local workers"]
    assert "identical results: yes" in out and "| run | wall s |" in out


def _example_model(tmp_path, consolidate: str | None = None):
    path = str(tmp_path / "in.xlsx")
    write_example(path)
    if consolidate:
        _edit(path, consolidate=consolidate)
    model, _p, _ = pipeline.load(path)
    return model


@pytest.mark.parametrize("consolidate", ["yes", "no"])
def test_packed_shard_rebuilds_the_same_records(tmp_path, consolidate):
    # Oracle: the records pipeline.run returns, compared with dataclasses' own field-by-field
    # equality (and the float bits of every Leg field), before and after the columns travel
    # through pickle as a worker's answer does.
    import pickle

    model = _example_model(tmp_path, consolidate)
    opts = pipeline.Options(analyses=False, scenarios=False)
    expect = pipeline.run(model, opts)
    costed = pipeline.run(model, opts)
    known = {"rates": model.rates, "lanes": model.lanes, "depots": model.depots, "ships": model.shipments}
    packed = pickle.loads(pickle.dumps(distributed.pack_shard(costed, known), protocol=5))
    whole = [list(range(len(model.shipments)))]
    got = distributed.gather(model, whole, [(packed, 0)], analyses=False)
    assert isinstance(got.results, distributed.PackedResults) and len(got.results) == len(expect.results)
    assert list(got.results) == expect.results and list(got.runs) == expect.runs
    assert got.results == expect.results and got.results[-1] == expect.results[-1]
    assert got.results[3:7] == expect.results[3:7]
    for a, b in zip(got.results, expect.results):
        assert a.shipment is b.shipment  # the Model's own records, not copies
        for ga, gb in zip(a.legs, b.legs):
            assert ga.card is gb.card and ga.use.lane is gb.use.lane
            for name, va in ga.__dict__.items():
                vb = gb.__dict__[name]
                assert type(va) is type(vb), name
                if isinstance(va, float):
                    assert va.hex() == vb.hex(), name  # the same bits, -0.0 and all
    assert got.analysis.lanes == expect.analysis.lanes


def test_packed_columns_keep_none_signed_zero_and_types():
    # Oracle: Python's own values (float.hex for the bits, type() for int against float).
    import numpy as np

    from costing.distributed import _Packer, _Reader, _unpack

    values = [[1.5, -0.0, 0.0, float("inf")], [None, 2.0, None, 3.25], [1, 2, 3, 2 ** 40],
              [True, False, True, True], ["a", "", "a", "b"], [(), ("x",), ("y", "z"), ()],
              [(0.5, -0.0), (), (1.0,), (2.0, 3.0)],
              [_dt.date(2026, 12, 7), None, _dt.date(2026, 12, 8), None], [7, 7, 7, 7], [1, 1.0, 1, None]]
    packer = _Packer({})
    reader = _Reader({}, {})
    for col in values:
        packed = packer.column(col)
        back = _unpack(packed, np.arange(len(col)), reader)
        assert [type(x) for x in back] == [type(x) for x in col]
        assert [x.hex() if isinstance(x, float) else x for x in back] == \
            [x.hex() if isinstance(x, float) else x for x in col]
        part = _unpack(packed, np.array([3, 0], dtype=np.int64), reader)
        assert [repr(x) for x in part] == [repr(col[3]), repr(col[0])]


def test_parquet_set_of_a_distributed_run_equals_the_single_process_one(tmp_path, cli, threads_cluster):
    # Oracle: the single-process run's Parquet set (itself checked against its full workbook in
    # tests/test_parquet_set.py), read back with pandas: the same rows, value for value.
    pd = pytest.importorskip("pandas")
    pytest.importorskip("pyarrow", reason="pyarrow not installed: pip install -e '.[test]'")
    inp = str(tmp_path / "in.xlsx")
    write_example(inp)
    os.mkdir(tmp_path / "one")
    os.mkdir(tmp_path / "two")
    one, two = str(tmp_path / "one" / "w.xlsx"), str(tmp_path / "two" / "w.xlsx")  # the same names
    assert cli("run", inp, "-o", one, "--parquet", "--quiet")[0] == 0
    code, _out, err = cli("run", inp, "-o", two, "--parquet", "--workers", "2", "--quiet")
    assert code == 0, err
    names = sorted(os.listdir(tmp_path / "one" / "w.parquet"))
    assert names == sorted(os.listdir(tmp_path / "two" / "w.parquet")) and "legs.parquet" in names
    # the example's two scenarios, gathered from the shards (costed.scenarios): their files too
    assert {"scenario_shipments.parquet", "scenario_vehicle_runs.parquet", "scenario_legs.parquet",
            "scenario_bridge_shipments.parquet"} <= set(names)
    ships = pd.read_parquet(tmp_path / "two" / "w.parquet" / "scenario_shipments.parquet")
    assert list(dict.fromkeys(ships["scenario"])) == ["fuel_up_12", "blerick_rail_closed"]
    assert len(ships) == 2 * 47
    for name in names:
        a = pd.read_parquet(tmp_path / "one" / "w.parquet" / name)
        b = pd.read_parquet(tmp_path / "two" / "w.parquet" / name)
        pd.testing.assert_frame_equal(a, b, check_exact=True)
    a, b = _cells(one), _cells(two)
    assert {k: (a[k], b.get(k)) for k in a if a[k] != b.get(k)} == {} and a.keys() == b.keys()
