"""The sheets finance compares: best route per objective, cost-time trade-offs, scenarios,
lane usage, charts and the map. Oracles: networkx (shortest paths, all simple paths for brute
force), hand-worked figures written out below, and the written file's own XML parts."""

from __future__ import annotations

import math
import zipfile
from decimal import ROUND_HALF_UP, Decimal

import networkx as nx
import openpyxl
import pytest

from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.network.build import build_graph
from costing.plan.route import Router
from tests.conftest import base_data


def r2(x):  # half away from zero to the cent (our own, for the oracle)
    return float(Decimal(f"{x:.15g}").quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


def _grid_model(seed: int):
    """A small invented network with cost-time conflicts: motorways fast with tolls, country
    roads slow and free."""
    import random

    rng = random.Random(seed)
    n = rng.randint(5, 8)
    depots = tuple(Depot(f"D{i}", "", 50 + rng.random() * 2, 4 + rng.random() * 3, "depot",
                         float(rng.randint(0, 40)), rng.choice([0.0, 0.5])) for i in range(n))
    lanes = []
    for k in range(rng.randint(n + 2, 2 * n + 2)):
        a, b = rng.sample(range(n), 2)
        from costing.geo import great_circle_km

        da, db = depots[a], depots[b]
        gc = great_circle_km(da.latitude, da.longitude, db.latitude, db.longitude)
        fast = rng.random() < 0.5
        km = round(gc * rng.uniform(1.05, 1.4), 1)
        hours = round(km / (85 if fast else 50), 2)
        lanes.append(Lane(f"L{k}", da.depot_id, db.depot_id, "road", km, hours,
                          float(rng.randint(10, 60)) if fast else 0.0, two_way=rng.random() < 0.8))
    card = RateCard("truck", "road", 0.9, 45.0, 24.0, per_trip=30.0)
    ship = Shipment("S", "D0", f"D{n - 1}", 12.0)
    return Model(Settings(), depots, tuple(lanes), (card,), (ship,))


def _brute_frontier(model: Model):
    """All simple lane paths (networkx.all_simple_paths on the lane multigraph), priced by
    hand from the documented rules, reduced to the (cost, hours) pairs no other path beats."""
    s = model.shipments[0]
    card = model.rates[0]
    dep = model.depot_index
    g = nx.MultiDiGraph()
    for lane in model.lanes:
        g.add_edge(lane.from_depot, lane.to_depot, key=lane.lane_id + ">", lane=lane)
        if lane.two_way:
            g.add_edge(lane.to_depot, lane.from_depot, key=lane.lane_id + "<", lane=lane)
    points = set()
    for path in nx.all_simple_edge_paths(g, s.origin, s.destination):
        cost = r2(dep[s.origin].handling_cost) + r2(card.per_trip) + r2(dep[s.destination].handling_cost)
        hours = dep[s.origin].handling_hours + dep[s.destination].handling_hours
        for a, b, key in path:
            lane = g.edges[a, b, key]["lane"]
            cost += r2(lane.distance_km * card.per_km) + r2(lane.drive_hours * card.per_hour) + r2(lane.toll)
            hours += lane.drive_hours
        points.add((round(cost, 6), round(hours, 6)))
    return sorted(p for p in points if not any(q != p and q[0] <= p[0] and q[1] <= p[1] for q in points))


@pytest.mark.parametrize("seed", range(40))
def test_frontier_against_brute_force(seed):
    model = _grid_model(seed)
    router = Router(model, build_graph(model))
    routes, capped = router.frontier(model.shipments[0], max_routes=50)
    got = sorted((round(r.subtotal, 6), round(r.drive_hours + r.handling_hours, 6)) for r in routes)
    assert got == _brute_frontier(model)
    assert not capped


def test_comparison_routes_match_networkx_per_objective():
    # distance and time: networkx Dijkstra with lane km / lane hours as weights (no hubs; the
    # start and end handling hours are the same on every route)
    for seed in range(20):
        model = _grid_model(seed)
        s = model.shipments[0]
        g = nx.DiGraph()
        for lane in model.lanes:
            pairs = [(lane.from_depot, lane.to_depot)]
            if lane.two_way:
                pairs.append((lane.to_depot, lane.from_depot))
            for a, b in pairs:
                for attr in ("km", "h"):
                    w = lane.distance_km if attr == "km" else lane.drive_hours
                    if not g.has_edge(a, b) or g[a][b].get(attr, math.inf) > w:
                        g.add_edge(a, b, **{**g.get_edge_data(a, b, {}), attr: w})
        router = Router(model, build_graph(model))
        alts = router.alternatives(s, ["distance", "time", "cost"])
        try:
            km = nx.dijkstra_path_length(g, s.origin, s.destination, weight="km")
            hours = nx.dijkstra_path_length(g, s.origin, s.destination, weight="h")
        except nx.NetworkXNoPath:
            assert alts["distance"].status == "no_route"
            continue
        assert alts["distance"].distance_km == pytest.approx(km)
        assert alts["time"].drive_hours == pytest.approx(hours)
        assert alts["cost"].total_cost <= alts["distance"].total_cost + 1e-9
        assert alts["cost"].total_cost <= alts["time"].total_cost + 1e-9


def test_batched_comparison_matches_networkx_and_single_searches():
    # The comparison across objectives is searched one-to-many per origin, profile and objective
    # (Router.prepare with force). Oracle: networkx Dijkstra per shipment on lane km and lane
    # hours; and every alternative equals the one the per-shipment A* finds (same route).
    from dataclasses import replace as dc_replace

    from costing.contract.inputs import OBJECTIVES
    from costing.plan.analysis import analyse

    for seed in range(12):
        base = _grid_model(seed)
        origin = base.shipments[0].origin
        ships = tuple(Shipment(f"S{d.depot_id}", origin, d.depot_id, 12.0, row=k + 2)
                      for k, d in enumerate(base.depots) if d.depot_id != origin)
        model = dc_replace(base, shipments=ships,
                           settings=dc_replace(base.settings, compare_objectives="yes"))
        g = nx.DiGraph()
        for lane in model.lanes:
            for a, b in [(lane.from_depot, lane.to_depot)] + \
                    ([(lane.to_depot, lane.from_depot)] if lane.two_way else []):
                for attr, w in (("km", lane.distance_km), ("h", lane.drive_hours)):
                    if not g.has_edge(a, b) or g[a][b].get(attr, math.inf) > w:
                        g.add_edge(a, b, **{**g.get_edge_data(a, b, {}), attr: w})
        batched = Router(model, build_graph(model))
        results = [batched.route(s, "cost") for s in ships]
        a = analyse(model, batched, results)
        single = Router(model, build_graph(model))
        assert batched.stats.batches >= len(OBJECTIVES) - 1  # the searches were batched
        for res in results:
            s = res.shipment
            alts = a.alternatives.get(s.shipment_id)
            if res.status != "routed":
                assert alts is None
                continue
            alone = single.alternatives(s, OBJECTIVES)
            for obj in OBJECTIVES:
                assert [leg.use.key for leg in alts[obj].legs] == [leg.use.key for leg in alone[obj].legs]
                assert alts[obj].total_cost == alone[obj].total_cost
                assert alts[obj].objective == obj
            assert alts["distance"].distance_km == pytest.approx(
                nx.dijkstra_path_length(g, s.origin, s.destination, weight="km"))
            assert alts["time"].drive_hours == pytest.approx(
                nx.dijkstra_path_length(g, s.origin, s.destination, weight="h"))


def test_comparison_sheet_one_row_per_shipment(cli, tmp_path, monkeypatch):
    # One row per compared shipment, the objectives side by side. Checks from the objectives'
    # definitions (no code of ours): the cost objective's route costs no more than any other
    # objective's, the distance objective's is no longer; the chosen objective's cost_vs_chosen
    # is 0 and every other one is that objective's total_cost less the chosen's.
    from costing.contract.inputs import OBJECTIVES

    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "d.xlsx")[0] == 0
    wb = openpyxl.load_workbook("d.xlsx", data_only=True)
    rows = list(wb["Comparison"].iter_rows(values_only=True))
    head = {name: i for i, name in enumerate(rows[0])}
    summary = [r for r in wb["Summary"].iter_rows(min_row=2, values_only=True) if r[1] == "routed"]
    assert len(rows) - 1 == len(summary) and len({r[0] for r in rows[1:]}) == len(rows) - 1
    for row in rows[1:]:
        def v(obj, name, row=row):
            return row[head[f"{obj}_{name}"]]
        chosen = row[head["chosen"]]
        assert v(chosen, "cost_vs_chosen") == 0 and v(chosen, "route") == "chosen route"
        assert 1 <= row[head["routes"]] <= len(OBJECTIVES)
        for obj in OBJECTIVES:
            assert v("cost", "total_cost") <= v(obj, "total_cost") + 1e-9
            if v(chosen, "distance_km"):  # own vehicles (a shipment bought from a carrier has no km)
                assert v("distance", "distance_km") <= v(obj, "distance_km") + 1e-9
            assert v(obj, "cost_vs_chosen") == pytest.approx(v(obj, "total_cost") - v(chosen, "total_cost"),
                                                             abs=0.005)
        distinct = {v(o, "route") for o in OBJECTIVES} | {"chosen route"}
        assert row[head["routes"]] == len(distinct) or row[head["routes"]] <= len(distinct)


def _scenario_data():
    data = base_data()
    data["Settings"].append({"setting": "fuel_price_per_litre", "value": 1.50})
    data["Rates"][0].update({"fuel_included_at": 1.50})
    # a toll of 50 on L1 keeps the direct lane L3 the cheaper route (a truck driving through hub B
    # pays no handling there, so with the base toll of 5 A > B > C would already win)
    data["Lanes"][0]["toll"] = 50
    data["Scenarios"] = [
        {"scenario": "fuel_up", "sheet": "Settings", "key": "fuel_price_per_litre", "column": "value",
         "change": "+12%"},
        {"scenario": "L3_closed", "sheet": "Lanes", "key": "L3", "column": "open", "change": "=no"},
    ]
    return data


def test_scenarios_end_to_end(cli, make_input, tmp_path):
    out = tmp_path / "o.xlsx"
    code, _, err = cli("run", make_input(_scenario_data()), "-o", str(out))
    assert code == 0, err
    wb = openpyxl.load_workbook(out, data_only=True)
    ws = wb["Scenario comparison"]
    rows = {r[0]: r for r in ws.iter_rows(min_row=4, max_row=6, values_only=True)}
    head = [c.value for c in ws[3]]
    total, delta, rerouted = head.index("total_cost"), head.index("delta_vs_base"), head.index("rerouted")
    fuel = head.index("fuel_surcharge")
    # base: fuel price = included price, no surcharge. fuel_up: 1.50 x 1.12 = 1.68, so 0.18 per
    # litre over the included price. S1 (1 truck) and S2 (3 trucks) both run lane L3, 190 km at
    # 30 l/100 km: S1 1 x 190 x 0.30 x 0.18 = 10.26; S2 3 x 190 x 0.30 x 0.18 = 30.78; total 41.04
    assert rows["base"][fuel] == 0
    assert rows["fuel_up"][fuel] == pytest.approx(41.04)
    assert rows["fuel_up"][delta] == pytest.approx(41.04)
    assert rows["fuel_up"][rerouted] == 0
    # L3 closed: both shipments go A > B > C. S1: 344.00 (test_cost_hand.py) + toll 45 more = 389.00
    # instead of 370.00; S2: 1032.00 + 3 x 45 = 1167.00 instead of 1110.00 -> +19 + 57 = +76.00
    assert rows["L3_closed"][delta] == pytest.approx(76.00)
    assert rows["L3_closed"][rerouted] == 2
    assert rows["L3_closed"][total] == pytest.approx(rows["base"][total] + 76.00)


def test_lane_usage_and_pictures_present(cli, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert cli("demo", "-o", "d.xlsx")[0] == 0
    wb = openpyxl.load_workbook("d.xlsx", data_only=True)
    for name in ("Summary", "Scenario comparison", "Vehicle runs", "Legs", "Comparison", "Trade-offs",
                 "Lane usage", "Charts", "Map", "Problems", "Run"):
        assert name in wb.sheetnames
    # lane usage cost adds up to the legs' shares of their vehicle runs (our own sum over the
    # Legs sheet), columns found by their header text
    legs = list(wb["Legs"].iter_rows(values_only=True))
    lc = legs[0].index("cost_share")
    lanes = list(wb["Lane usage"].iter_rows(values_only=True))
    cost = lanes[0].index("cost")
    assert sum(r[cost] for r in lanes[1:]) == pytest.approx(sum(r[lc] for r in legs[1:]), abs=0.01)
    with zipfile.ZipFile("d.xlsx") as z:
        names = z.namelist()
        charts = [n for n in names if n.startswith("xl/charts/chart")]
        assert len(charts) >= 4  # component columns, trade-off scatter, scenario bar, stacked
        kinds = "".join(z.read(n).decode() for n in charts)
        assert "<c:scatterChart>" in kinds and "<c:barChart>" in kinds
        pngs = [n for n in names if n.startswith("xl/media/") and n.endswith(".png")]
        assert pngs and z.read(pngs[0])[:8] == b"\x89PNG\r\n\x1a\n"
    # every shipment with a route has trade-offs, and the first option is the cheapest
    trade = list(wb["Trade-offs"].iter_rows(min_row=2, values_only=True))
    firsts = [r for r in trade if r[1] == 1]
    assert all(r[9] == "cheapest" for r in firsts)


@pytest.mark.parametrize("seed", range(30))
def test_array_engine_gives_the_same_routes_as_the_plain_search(seed, monkeypatch):
    # large one-card networks go to costing/engine.py (landmarks, compiled one-to-all); forced on
    # here for small ones, every shipment's cost must equal the plain search's
    from dataclasses import replace

    from pipeline_helpers import route_all

    import costing.plan.route as route

    model = _grid_model(seed)
    ids = [d.depot_id for d in model.depots]
    ships = tuple(Shipment(f"S{a}{b}", a, b, 12.0) for a in ids[:2] for b in ids if a != b)
    model = replace(model, shipments=ships)
    plain, _, _ = route_all(model)
    monkeypatch.setattr(route, "ENGINE_MIN_DEPOTS", 0)
    fast, stats, _ = route_all(model)
    assert any("landmarks" in note for note in stats.bounds.values())
    for a, b in zip(plain, fast):
        assert a.status == b.status
        if a.status == "routed":
            assert b.total_cost == pytest.approx(a.total_cost, abs=1e-9)
