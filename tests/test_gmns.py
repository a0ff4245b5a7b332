"""GMNS import on a real street network (OpenStreetMap, shipped in the momepy wheel; see
tests/data/momepy_nyc/README.md), converted to GMNS here, routes checked against networkx.

Oracle: networkx Dijkstra on a DiGraph built straight from the GraphML file in this test (it
shares no code with costing.network.gmns or the search core). Distances: geographiclib's WGS84
geodesic for the snap distance (our haversine is within 0.57 % of it, costing/geo.py)."""

from __future__ import annotations

import csv
import hashlib
import os

import networkx as nx
import openpyxl
import pytest

from costing import pipeline
from costing.cli import main
from costing.errors import InputError
from costing.model import Depot, Model, RateCard, Settings, Shipment
from costing.network.gmns import read_gmns, snap

DATA = os.path.join(os.path.dirname(__file__), "data", "momepy_nyc", "nyc_graph.graphml")
SHA256 = "d071cec23cfcd659b3571fbcc7ca21cf3500f0e4d3c30c6f4facc71517b280ae"  # momepy 0.11.0 wheel
CLOSED = 5  # edge number (in file order) written with lanes = 0
TOLLED = 7  # edge number written with a toll


def _edges():
    g = nx.read_graphml(DATA)
    return g, [(d["from"], d["to"], float(d["length"]), d.get("oneway") == "True") for _a, _b, d
               in g.edges(data=True)]


def write_gmns(folder) -> tuple[str, str]:
    """The graph as GMNS node.csv, link.csv and config.csv (lengths in m, WGS84)."""
    g, edges = _edges()
    nodes, links = os.path.join(folder, "node.csv"), os.path.join(folder, "link.csv")
    with open(nodes, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["node_id", "name", "x_coord", "y_coord"])
        for n, d in g.nodes(data=True):
            w.writerow([n, "", d["lon"], d["lat"]])
    with open(links, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["link_id", "from_node_id", "to_node_id", "directed", "length", "free_speed", "lanes",
                    "toll"])
        for k, (a, b, m, oneway) in enumerate(edges):
            w.writerow([k, a, b, "true" if oneway else "false", m, 40, 0 if k == CLOSED else 2,
                        2.5 if k == TOLLED else ""])
    with open(os.path.join(folder, "config.csv"), "w", newline="") as f:
        f.write("dataset_name,long_length,speed,crs\nnyc,m,kph,EPSG:4326\n")
    return nodes, links


def oracle() -> nx.DiGraph:
    """networkx DiGraph of the same streets: one-way edges one way, the closed edge left out."""
    _g, edges = _edges()
    d = nx.DiGraph()
    for k, (a, b, m, oneway) in enumerate(edges):
        if k == CLOSED:
            continue
        for u, v in [(a, b)] if oneway else [(a, b), (b, a)]:
            if not d.has_edge(u, v) or d[u][v]["m"] > m:
                d.add_edge(u, v, m=m)
    return d


def test_data_file_is_the_shipped_one():
    with open(DATA, "rb") as f:
        assert hashlib.sha256(f.read()).hexdigest() == SHA256  # momepy 0.11.0 wheel, references 7.2


def test_mapping_keeps_one_way_lengths_speeds_tolls_closures(tmp_path):
    nodes, links = write_gmns(tmp_path)
    net = read_gmns(nodes, links)
    _g, edges = _edges()
    assert len(net.depots) == 46 and len(net.lanes) == 73  # references 7.2: 46 nodes, 73 edges
    assert sum(not ln.two_way for ln in net.lanes) == sum(e[3] for e in edges)
    lane = net.lanes[TOLLED]
    assert lane.toll == 2.5 and lane.open
    assert not net.lanes[CLOSED].open
    # 40 km/h free speed: hours = km / 40 (definition of speed)
    assert lane.drive_hours == pytest.approx(lane.distance_km / 40)
    # total edge length 8573.7 m (references 7.2, measured with networkx)
    assert sum(ln.distance_km for ln in net.lanes) == pytest.approx(8.5737, abs=1e-4)


def test_routes_match_networkx(tmp_path):
    nodes, links = write_gmns(tmp_path)
    net = read_gmns(nodes, links)
    ids = [d.depot_id[len("gmns_n"):] for d in net.depots]
    ref = oracle()
    origin = ids[0]
    lengths = nx.single_source_dijkstra_path_length(ref, origin, weight="m")
    shipments = tuple(Shipment(f"S{k}", "gmns_n" + origin, "gmns_n" + t, 1.0) for k, t in enumerate(ids[1:]))
    model = Model(Settings(objective="distance", compare_objectives="no", frontier_max_routes=0),
                  net.depots, net.lanes, (RateCard("van", "road", 1.0, 0.0, 3.0),), shipments)
    costed = pipeline.run(model, pipeline.Options(analyses=False, scenarios=False))
    checked = 0
    for s, r in zip(shipments, costed.results):
        target = s.destination[len("gmns_n"):]
        if target not in lengths:
            assert r.status != "routed"
            continue
        km = sum(leg.use.km for leg in r.legs)
        assert km * 1000 == pytest.approx(lengths[target], abs=1e-6), s.destination
        checked += 1
    assert checked >= 40


def test_snap_distance_against_geodesic(tmp_path):
    from geographiclib.geodesic import Geodesic

    nodes, links = write_gmns(tmp_path)
    net = read_gmns(nodes, links)
    d = Depot("DEP1", "yard", 40.7890, -73.9700)
    (s,), (lane,) = snap([d], net)
    node = next(n for n in net.depots if n.depot_id == s.node_depot_id)
    geo = Geodesic.WGS84.Inverse(d.latitude, d.longitude, node.latitude, node.longitude)["s12"] / 1000
    assert s.km == pytest.approx(geo, rel=0.006)  # haversine within 0.57 % of WGS84 (costing/geo.py)
    # nearest: no node is closer by the geodesic either (geographiclib)
    others = [Geodesic.WGS84.Inverse(d.latitude, d.longitude, n.latitude, n.longitude)["s12"] / 1000
              for n in net.depots]
    assert geo <= min(others) * 1.006
    assert lane.from_depot == "DEP1" and lane.two_way and lane.distance_km == round(s.km, 3)


def test_bad_link_names_file_and_line(tmp_path):
    nodes, links = write_gmns(tmp_path)
    with open(links, "a") as f:
        f.write("999,42421806,nowhere,true,10,,,\n")
    with pytest.raises(InputError) as e:
        read_gmns(nodes, links)
    p = e.value.problems[0]
    assert p.sheet == "link.csv" and p.cell == "line 75" and "nowhere" in p.message


def test_length_without_unit_is_refused(tmp_path):
    nodes, links = write_gmns(tmp_path)
    os.remove(os.path.join(tmp_path, "config.csv"))
    with pytest.raises(InputError, match="unit"):
        read_gmns(nodes, links)


def test_cli_import_writes_new_workbook_input_unchanged(tmp_path, capsys):
    from costing.example import write_example

    nodes, links = write_gmns(tmp_path)
    book = str(tmp_path / "in.xlsx")
    write_example(book)
    before = hashlib.sha256(open(book, "rb").read()).hexdigest()
    out = str(tmp_path / "out.xlsx")
    assert main(["import-network", nodes, links, "-w", book, "-o", out]) == 0
    assert hashlib.sha256(open(book, "rb").read()).hexdigest() == before  # input never modified
    text = capsys.readouterr().out
    assert "46 nodes, 73 links" in text and "joined to node" in text
    wb = openpyxl.load_workbook(out, read_only=True)
    lane_ids = [r[0] for r in wb["Lanes"].iter_rows(min_row=2, values_only=True) if r[0]]
    wb.close()
    assert sum(str(x).startswith("gmns_l") for x in lane_ids) == 73
    model, problems, _ = pipeline.load(out)
    assert model is not None and not [p for p in problems if p.severity == "error"]
    assert len([ln for ln in model.lanes if ln.lane_id.startswith("gmns_c")]) == 38  # one per depot
    # importing again into the output replaces the imported rows instead of adding them twice
    out2 = str(tmp_path / "out2.xlsx")
    assert main(["import-network", nodes, links, "-w", out, "-o", out2, "--quiet"]) == 0
    model2, _p, _ = pipeline.load(out2)
    assert len(model2.lanes) == len(model.lanes) and len(model2.depots) == len(model.depots)
