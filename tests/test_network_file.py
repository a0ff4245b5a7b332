"""The compact network file (Settings network_file) on a real street network: the momepy
OpenStreetMap graph of tests/test_gmns.py, imported once as Depots/Lanes rows and once as a
network file. Oracles: networkx Dijkstra on a DiGraph built from the GraphML file in
tests/test_gmns.py (shares no code with costing), and the rows import, which goes through the
workbook sheets and their validation instead of the file."""

from __future__ import annotations

import hashlib
import os
from dataclasses import replace

import networkx as nx
import numpy as np
import openpyxl
import pytest

from costing import cli, pipeline
from costing.cli import main
from costing.network.gmns import read_gmns
from costing.network.netfile import NetworkFileError, read_network_file, write_network_file
from costing.workbook.template import write_template
from tests.test_gmns import oracle, write_gmns

YARDS = [("Y1", 40.7890, -73.9700), ("Y2", 40.7850, -73.9750), ("Y3", 40.7820, -73.9790)]


def _workbook(path, node_ids, extra_depots=()):
    """A small workbook of three yards in the graph's streets; shipments yard to yard and from one
    node to every other (invented inputs)."""
    ships = [{"shipment_id": f"Y{k}", "origin": a, "destination": b, "weight_t": 1.0}
             for k, (a, b) in enumerate([("Y1", "Y2"), ("Y2", "Y3"), ("Y3", "Y1"), ("Y1", "Y3")])]
    ships += [{"shipment_id": f"N{k}", "origin": "gmns_n" + node_ids[0], "destination": "gmns_n" + t,
               "weight_t": 1.0} for k, t in enumerate(node_ids[1:])]
    write_template(path, {
        "Settings": [{"setting": "objective", "value": "distance"},
                     {"setting": "compare_objectives", "value": "no"},
                     {"setting": "frontier_max_routes", "value": 0}],
        "Depots": [{"depot_id": d, "name": d, "latitude": a, "longitude": o} for d, a, o in YARDS]
        + list(extra_depots),
        "Lanes": [],
        "Rates": [{"vehicle": "van", "mode": "road", "per_km": 1.0, "per_hour": 0.0, "payload_t": 3.0}],
        "Shipments": ships,
    })


@pytest.fixture
def imported(tmp_path):
    """(rows workbook, compact workbook, node ids): the same import both ways."""
    nodes, links = write_gmns(tmp_path)
    ids = [d.depot_id[len("gmns_n"):] for d in read_gmns(nodes, links).depots]
    book = str(tmp_path / "in.xlsx")
    _workbook(book, ids)
    rows, compact = str(tmp_path / "rows.xlsx"), str(tmp_path / "compact.xlsx")
    assert main(["import-network", nodes, links, "-w", book, "-o", rows, "--quiet"]) == 0
    before = hashlib.sha256(open(book, "rb").read()).hexdigest()
    assert main(["import-network", nodes, links, "-w", book, "-o", compact, "--compact", "--quiet"]) == 0
    assert hashlib.sha256(open(book, "rb").read()).hexdigest() == before  # input never modified
    return rows, compact, ids


def _setting_cell(path):
    wb = openpyxl.load_workbook(path, read_only=True)
    try:
        for r, row in enumerate(wb["Settings"].iter_rows(values_only=True), start=1):
            if row[0] == "network_file":
                return f"B{r}", row[1]
    finally:
        wb.close()
    return None, None


def test_file_round_trip_gives_equal_records(tmp_path):
    nodes, links = write_gmns(tmp_path)
    net = read_gmns(nodes, links)
    path = str(tmp_path / "n.network.npz")
    write_network_file(path, net.depots, net.lanes)
    depots, lanes = read_network_file(path)
    # records equal field by field; row (the csv line) is not kept: file records are in no sheet
    assert depots == tuple(replace(d, row=0) for d in net.depots)
    assert lanes == tuple(replace(ln, row=0) for ln in net.lanes)


def test_compact_workbook_has_no_network_rows_and_names_the_file(imported):
    _rows, compact, _ids = imported
    cell, value = _setting_cell(compact)
    assert value == "compact.network.npz" and os.path.isfile(os.path.join(os.path.dirname(compact), value))
    wb = openpyxl.load_workbook(compact, read_only=True)
    lane_ids = [r[0] for r in wb["Lanes"].iter_rows(min_row=2, values_only=True) if r and r[0]]
    wb.close()
    assert lane_ids == []
    model, problems, _ = pipeline.load(compact)
    assert model is not None and not [p for p in problems if p.severity == "error"]
    # 3 yards + 46 nodes (references 7.2: 46 nodes, 73 edges) and 73 links + 3 connectors
    assert len(model.depots) == 49 and len(model.lanes) == 76


def test_routes_equal_rows_import_and_networkx(imported):
    rows, compact, ids = imported
    results = {}
    for name, path in (("rows", rows), ("compact", compact)):
        model, problems, _ = pipeline.load(path)
        assert model is not None and not [p for p in problems if p.severity == "error"]
        results[name] = pipeline.run(model, pipeline.Options(scenarios=False)).results
    for a, b in zip(results["rows"], results["compact"]):  # the rows import: same routes, same money
        assert a.status == b.status
        assert [g.use.key for g in a.legs] == [g.use.key for g in b.legs]
        assert a.total_cost == b.total_cost
        # the rows keep km to 4 decimals (costing.workbook.network_sheets), the file every digit
        assert sum(g.use.km for g in a.legs) == pytest.approx(sum(g.use.km for g in b.legs), abs=1e-3)
    # networkx Dijkstra on the GraphML streets (tests/test_gmns.py oracle), metres
    ref = oracle()
    lengths = nx.single_source_dijkstra_path_length(ref, ids[0], weight="m")
    checked = 0
    for r in results["compact"]:
        if not r.shipment.shipment_id.startswith("N"):
            continue
        target = r.shipment.destination[len("gmns_n"):]
        if target not in lengths:
            assert r.status != "routed"
            continue
        assert sum(g.use.km for g in r.legs) * 1000 == pytest.approx(lengths[target], abs=1e-6)
        checked += 1
    assert checked >= 40
    # yard to yard: connector (snap km, rounded to the metre) + streets + connector, as networkx
    # finds it on the oracle graph with the connectors added both ways
    model, _p, _ = pipeline.load(compact)
    g = ref.copy()
    for ln in model.lanes:
        if ln.lane_id.startswith("gmns_c"):
            node = ln.to_depot[len("gmns_n"):]
            g.add_edge(ln.from_depot, node, m=ln.distance_km * 1000)
            g.add_edge(node, ln.from_depot, m=ln.distance_km * 1000)
    yards = 0
    for r in results["compact"]:
        s = r.shipment
        if s.shipment_id.startswith("Y"):
            try:
                expect = nx.dijkstra_path_length(g, s.origin, s.destination, weight="m")
            except nx.NetworkXNoPath:  # one-way streets: networkx finds no way either
                assert r.status != "routed"
                continue
            assert r.status == "routed"
            assert sum(leg.use.km for leg in r.legs) * 1000 == pytest.approx(expect, abs=1e-6)
            yards += 1
    assert yards >= 2


def test_cli_runs_the_compact_workbook(imported, tmp_path, capsys):
    _rows, compact, _ids = imported
    out = str(tmp_path / "costed.xlsx")
    assert main(["run", compact, "-o", out, "--quiet"]) == 0
    wb = openpyxl.load_workbook(out, read_only=True)
    run = {r[0]: r[1] for r in wb["Run"].iter_rows(min_row=2, max_col=2, values_only=True)}
    wb.close()
    assert run["setting: network_file"] == "compact.network.npz"
    digest = hashlib.sha256(open(tmp_path / "compact.network.npz", "rb").read()).hexdigest()
    assert run["network file"].startswith(f"compact.network.npz: SHA-256 {digest}")


def _run_errors(path, tmp_path, capsys):
    out = str(tmp_path / "never.xlsx")
    code = main(["run", path, "-o", out])
    err = capsys.readouterr().err
    assert code == 1 and not os.path.exists(out)  # nothing written
    assert not [f for f in os.listdir(tmp_path) if f.endswith(".part")]
    return err


def test_missing_file_names_the_setting_cell(imported, tmp_path, capsys):
    _rows, compact, _ids = imported
    cell, name = _setting_cell(compact)
    os.remove(os.path.join(tmp_path, name))
    err = _run_errors(compact, tmp_path, capsys)
    assert f"Settings!{cell}" in err and "file not found" in err and "--compact" in err


@pytest.mark.parametrize("damage", ["garbage", "truncated", "wrong_table"])
def test_damaged_file_names_the_setting_cell(imported, tmp_path, capsys, damage):
    _rows, compact, _ids = imported
    cell, name = _setting_cell(compact)
    path = os.path.join(tmp_path, name)
    data = open(path, "rb").read()
    if damage == "garbage":
        open(path, "wb").write(b"not a network file at all")
    elif damage == "truncated":
        open(path, "wb").write(data[: len(data) // 2])
    else:
        with np.load(path) as z:
            arrays = {k: z[k] for k in z.files}
        arrays["lane.distance_km"] = arrays["lane.distance_km"][:-1]  # one length short
        np.savez(path, **arrays)
    with pytest.raises(NetworkFileError):
        read_network_file(path)
    err = _run_errors(compact, tmp_path, capsys)
    assert f"Settings!{cell}" in err and "network_file" in err and "import-network" in err


def test_depot_in_workbook_and_file_is_an_error_at_its_cell(tmp_path, capsys):
    nodes, links = write_gmns(tmp_path)
    net = read_gmns(nodes, links)
    ids = [d.depot_id[len("gmns_n"):] for d in net.depots]
    book = str(tmp_path / "in.xlsx")
    _workbook(book, ids)
    compact = str(tmp_path / "compact.xlsx")
    assert main(["import-network", nodes, links, "-w", book, "-o", compact, "--compact", "--quiet"]) == 0
    wb = openpyxl.load_workbook(compact)
    wb["Depots"].append([net.depots[3].depot_id, "typed twice", 40.78, -73.97])
    row = wb["Depots"].max_row
    wb.save(compact)
    err = _run_errors(compact, tmp_path, capsys)
    assert f"Depots!A{row}" in err and net.depots[3].depot_id in err and "network file" in err


def test_file_lane_to_unknown_depot_names_the_setting(imported, tmp_path, capsys):
    _rows, compact, _ids = imported
    cell, _name = _setting_cell(compact)
    wb = openpyxl.load_workbook(compact)
    ws = wb["Depots"]
    ws.delete_rows(2)  # Y1, which a connector lane of the file names
    wb.save(compact)
    err = _run_errors(compact, tmp_path, capsys)
    assert f"Settings!{cell}" in err and "'Y1'" in err


def test_compact_is_automatic_past_the_size(tmp_path, monkeypatch, capsys):
    nodes, links = write_gmns(tmp_path)
    ids = [d.depot_id[len("gmns_n"):] for d in read_gmns(nodes, links).depots]
    book = str(tmp_path / "in.xlsx")
    _workbook(book, ids)
    monkeypatch.setattr(cli, "COMPACT_ABOVE", 50)  # 73 links
    out = str(tmp_path / "big.xlsx")
    assert main(["import-network", nodes, links, "-w", book, "-o", out]) == 0
    assert "network file" in capsys.readouterr().out
    assert _setting_cell(out)[1] == "big.network.npz"
    # a second import refuses to replace the network file without --overwrite (exit 2, usage)
    assert main(["import-network", nodes, links, "-w", book, "-o", str(tmp_path / "other.xlsx"),
                 "--compact"]) == 0
    os.remove(out)
    assert main(["import-network", nodes, links, "-w", book, "-o", out, "--compact"]) == 2
    # importing as rows into a compact workbook clears the setting (rows and file never both)
    monkeypatch.undo()
    rows = str(tmp_path / "rows.xlsx")
    assert main(["import-network", nodes, links, "-w", str(tmp_path / "other.xlsx"), "-o", rows,
                 "--quiet"]) == 0
    assert _setting_cell(rows)[1] is None
    model, problems, _ = pipeline.load(rows)
    assert model is not None and len(model.lanes) == 76


def test_scenario_cannot_change_the_network_file(imported, tmp_path, capsys):
    _rows, compact, _ids = imported
    wb = openpyxl.load_workbook(compact)
    ws = wb["Scenarios"] if "Scenarios" in wb.sheetnames else wb.create_sheet("Scenarios")
    if ws.max_row < 1 or ws.cell(1, 1).value is None:
        ws.append(["scenario", "sheet", "key", "column", "change"])
    ws.append(["other_net", "Settings", "network_file", "value", "=other.npz"])
    ws.cell(ws.max_row, 5).data_type = "s"  # typed text, not a formula
    wb.save(compact)
    err = _run_errors(compact, tmp_path, capsys)
    assert "network_file cannot be changed by a scenario" in err
