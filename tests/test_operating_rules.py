"""Intermodal routes, lane restrictions, emissions and the fuel surcharge.

Oracles: networkx Dijkstra on an expanded (depot, rate card) graph built here, independently of
costing/network.py; hand calculations written out below; published emission factors named
beside each check. Networks and rates are invented test inputs.
"""

from __future__ import annotations

import random
from decimal import ROUND_HALF_UP, Decimal

import networkx as nx
import pytest
from pipeline_helpers import route_all

from costing.geo import great_circle_km
from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment


def run(model):
    results, _stats, problems = route_all(model)
    return {r.shipment.shipment_id: r for r in results}, problems


def r2(x):  # half away from zero to the cent, our own implementation for the oracle
    return float(Decimal(f"{x:.15g}").quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))


TRUCK = RateCard("truck", "road", 1.2, 40.0, 24.0, per_trip=50.0)
WAGON = RateCard("wagon", "rail", 0.5, 15.0, 60.0, per_trip=100.0)


def corridor(t_kind="terminal"):
    depots = (Depot("A", "A", 51.0, 3.0, "customer", 20.0), Depot("T1", "T1", 51.1, 3.4, t_kind, 80.0),
              Depot("T2", "T2", 52.0, 11.0, t_kind, 80.0), Depot("B", "B", 52.1, 11.4, "customer", 20.0))
    lanes = (Lane("R1", "A", "T1", "road", 30.0, 0.5), Lane("X1", "T1", "T2", "rail", 600.0, 10.0),
             Lane("R2", "T2", "B", "road", 30.0, 0.5), Lane("RD", "A", "B", "road", 640.0, 8.5))
    return depots, lanes


def test_road_rail_road_beats_road():
    depots, lanes = corridor()
    model = Model(Settings(), depots, lanes, (TRUCK, WAGON), (Shipment("S1", "A", "B", 20.0),))
    res, _ = run(model)
    s1 = res["S1"]
    # Road all the way: 640 x 1.2 = 768 + 8.5 x 40 = 340 + trip 50 + handling A 20 + B 20 = 1198.
    # Road-rail-road: truck A-T1 36 + 20 + trip 50 + handling A 20             = 126
    #   change at T1: truck unloaded 80, wagon loaded 80 + wagon trip 100;
    #                 rail 300 + 10 x 15 = 150                                   = 710
    #   change at T2: wagon unloaded 80, truck loaded 80 + truck trip 50;
    #                 road 36 + 20; handling B 20                                = 286
    #   total                                                                    = 1122
    # (handling per vehicle at both ends of each vehicle run: each unit lifted off and on)
    assert [leg.use.lane.lane_id for leg in s1.legs] == ["R1", "X1", "R2"]
    assert [leg.card.vehicle for leg in s1.legs] == ["truck", "wagon", "truck"]
    assert [(leg.start_handling_cost, leg.end_handling_cost) for leg in s1.legs] == [
        (20.0, 80.0), (80.0, 80.0), (80.0, 20.0)]
    assert s1.total_cost == 1122.00
    assert "intermodal" in s1.message
    # the change happens only at terminals and ports: at plain depots the truck drives through
    depots, lanes = corridor("depot")
    model = Model(Settings(), depots, lanes, (TRUCK, WAGON), (Shipment("S1", "A", "B", 20.0),))
    res, _ = run(model)
    assert [leg.use.lane.lane_id for leg in res["S1"].legs] == ["RD"]
    assert res["S1"].total_cost == 1198.00


def _random_intermodal(seed):
    rng = random.Random(seed)
    n = rng.randint(6, 14)
    kinds = ["depot", "customer", "hub", "terminal", "port"]
    depots = tuple(Depot(f"D{i}", "", 50 + rng.random() * 3, 3 + rng.random() * 6,
                         rng.choice(kinds), float(rng.randint(0, 90)), rng.random()) for i in range(n))
    lanes = []
    for k in range(rng.randint(n, 3 * n)):
        a, b = rng.sample(range(n), 2)
        da, db = depots[a], depots[b]
        gc = great_circle_km(da.latitude, da.longitude, db.latitude, db.longitude)
        mode = rng.choice(["road", "road", "rail"])
        km = round(gc * rng.uniform(1.05, 1.5), 1)
        lanes.append(Lane(f"L{k}", da.depot_id, db.depot_id, mode, km, round(km / rng.uniform(40, 90), 2),
                          float(rng.randint(0, 30)), float(rng.choice([0, 0, 40])), rng.random() < 0.7,
                          None, True, rng.random() < 0.9))
    rates = (RateCard("artic", "road", rng.uniform(0.8, 1.4), rng.uniform(25, 45), 24.0,
                      per_trip=float(rng.randint(0, 80))),
             RateCard("rigid", "road", rng.uniform(0.6, 1.0), rng.uniform(25, 40), 9.0,
                      per_trip=float(rng.randint(0, 60))),
             RateCard("wagon", "rail", rng.uniform(0.3, 0.7), rng.uniform(10, 25), 60.0,
                      per_trip=float(rng.randint(50, 150))))
    weight = rng.choice([3.0, 8.0, 20.0, 45.0])
    pairs = rng.sample([(a, b) for a in range(n) for b in range(n) if a != b], 5)
    ships = tuple(Shipment(f"S{i}", depots[a].depot_id, depots[b].depot_id, weight)
                  for i, (a, b) in enumerate(pairs))
    # each load priced alone: the oracle checks each shipment's own least-cost route (sharing
    # vehicles may move a load to a dearer route of its own; tests/test_week_plan.py covers that)
    return Model(Settings(consolidate="no"), depots, tuple(lanes), rates, ships)


def oracle_cost(model: Model, s: Shipment) -> float | None:
    """Least subtotal on a (depot, card) graph built here from the documented rules."""
    dep = {d.depot_id: d for d in model.depots}
    g = nx.DiGraph()

    def add(u, v, w):
        if not g.has_edge(u, v) or g[u][v]["weight"] > w:
            g.add_edge(u, v, weight=w)

    def n_of(card):
        import math
        return max(1, math.ceil(s.weight_t / card.payload_t - 1e-9))

    for card in model.rates:
        n = n_of(card)
        key = (card.vehicle, card.mode)
        add("src", (s.origin, key), r2(n * dep[s.origin].handling_cost) + r2(n * card.per_trip))
        d = dep[s.destination]
        add((s.destination, key), "dst", r2(n * d.handling_cost))  # unloading, at a hub too
        for lane in model.lanes:
            if not lane.open or lane.mode != card.mode:
                continue
            ends = [(lane.from_depot, lane.to_depot)] + ([(lane.to_depot, lane.from_depot)] if lane.two_way
                                                         else [])
            for a, b in ends:
                w = (r2(n * lane.distance_km * card.per_km) + r2(n * lane.drive_hours * card.per_hour)
                     + r2(n * lane.toll) + r2(n * lane.fixed_cost))
                add((a, key), (b, key), w)  # driving through a hub: no handling
        for other in model.rates:
            if other is card:
                continue
            m = n_of(other)
            for d in model.depots:
                # another mode at a terminal or port; another vehicle of the same mode at a hub
                if (d.kind in ("terminal", "port")) == (other.mode != card.mode) and \
                        d.kind in ("terminal", "port", "hub"):
                    add((d.depot_id, key), (d.depot_id, (other.vehicle, other.mode)),
                        r2(n * d.handling_cost) + r2(m * d.handling_cost) + r2(m * other.per_trip))
    try:
        return nx.dijkstra_path_length(g, "src", "dst")
    except (nx.NetworkXNoPath, nx.NodeNotFound):
        return None


@pytest.mark.parametrize("seed", range(60))
def test_intermodal_against_expanded_graph_oracle(seed):
    model = _random_intermodal(seed)
    res, _ = run(model)
    for s in model.shipments:
        expected = oracle_cost(model, s)
        got = res[s.shipment_id]
        if expected is None:
            assert got.status == "no_route"
        else:
            assert got.status == "routed"
            assert got.subtotal == pytest.approx(expected, abs=1e-6)
            # a change of mode happens at a terminal or port, a change of vehicle within a mode at a hub
            for a, b in zip(got.legs, got.legs[1:]):
                if a.card != b.card:
                    kind = model.depot(a.use.to_depot).kind
                    assert kind == ("hub" if a.card.mode == b.card.mode else kind)
                    assert kind in (("hub",) if a.card.mode == b.card.mode else ("terminal", "port"))


def _restricted():
    depots = (Depot("A", "A", 51.0, 6.0), Depot("B", "B", 51.2, 6.3), Depot("C", "C", 51.1, 6.5))
    lanes = (Lane("TUNNEL", "A", "C", "road", 40.0, 0.5, hazmat_allowed=False),
             Lane("BRIDGE", "A", "B", "road", 25.0, 0.4, max_weight_t=30.0),
             Lane("B-C", "B", "C", "road", 20.0, 0.3),
             Lane("LONG", "A", "C", "road", 80.0, 1.2))
    rates = (RateCard("artic", "road", 1.0, 30.0, 24.5, tare_t=14.5),)
    return depots, lanes, rates


def test_hazmat_and_weight_restrictions():
    depots, lanes, rates = _restricted()
    ships = (Shipment("plain", "A", "C", 10.0), Shipment("hazmat", "A", "C", 10.0, hazmat=True),
             Shipment("heavy_hazmat", "A", "C", 20.0, hazmat=True))
    res, _ = run(Model(Settings(), depots, lanes, rates, ships))
    assert [leg.use.lane.lane_id for leg in res["plain"].legs] == ["TUNNEL"]
    # dangerous goods may not use the tunnel: over the bridge, 10 t + 14.5 t tare = 24.5 t <= 30 t
    assert [leg.use.lane.lane_id for leg in res["hazmat"].legs] == ["BRIDGE", "B-C"]
    # 20 t + 14.5 t = 34.5 t is over the bridge's 30 t: the long way round
    assert [leg.use.lane.lane_id for leg in res["heavy_hazmat"].legs] == ["LONG"]


def test_no_route_names_the_restriction():
    depots, lanes, rates = _restricted()
    lanes = lanes[:3]  # no long way round
    ships = (Shipment("heavy_hazmat", "A", "C", 20.0, hazmat=True),)
    res, _ = run(Model(Settings(), depots, lanes, rates, ships))
    r = res["heavy_hazmat"]
    assert r.status == "no_route"
    assert "TUNNEL does not allow dangerous goods" in r.message


def test_weight_limit_message():
    depots, lanes, rates = _restricted()
    lanes = (lanes[1], lanes[2])  # only the bridge route
    res, _ = run(Model(Settings(), depots, lanes, rates, (Shipment("heavy", "A", "C", 20.0),)))
    assert res["heavy"].status == "no_route"
    assert "BRIDGE allows at most 30 t" in res["heavy"].message and "34.5 t" in res["heavy"].message


def test_emissions_fuel_based_and_default_intensity():
    depots = (Depot("A", "A", 51.0, 6.0), Depot("B", "B", 51.5, 7.0))
    lanes = (Lane("L", "A", "B", "road", 100.0, 1.5),)
    # UK DESNZ 2025 diesel (average biofuel blend) 2.57082 kg CO2e per litre, tank-to-wheel
    # (references.md 4.1, [V-2ND] transcription of the DESNZ 2025 factors)
    fuel_card = RateCard("artic", "road", 1.0, 30.0, 24.0, fuel_l_per_100km=31.0, co2e_kg_per_litre=2.57082)
    model = Model(Settings(), depots, lanes, (fuel_card,), (Shipment("S", "A", "B", 10.0),))
    res, _ = run(model)
    # litres = 100 km x 31 / 100 x 1 vehicle = 31 l; CO2e tank-to-wheel = 31 x 2.57082 = 79.69542 kg;
    # well-to-wheel 31 x 3.19747 (DESNZ 2025 WTW, 2.57082 + 0.62665 WTT) = 99.12157 kg
    assert res["S"].co2e_ttw_kg == pytest.approx(79.69542)
    assert res["S"].co2e_kg == pytest.approx(99.12157)
    assert res["S"].legs[0].co2e_basis == "fuel"
    bare = RateCard("artic", "road", 1.0, 30.0, 24.0)
    model = Model(Settings(), depots, lanes, (bare,), (Shipment("S", "A", "B", 10.0),))
    res, _ = run(model)
    # 2012 Defra/DECC GHG conversion factors, Annex 7 Table 7e, articulated HGV > 33 t, UK average
    # load: 102.73 g CO2e per tonne-km well-to-wheel, 84.73 direct ([V-DOC], references.md 4.3):
    # 10 t x 100 km -> 102.73 kg WTW, 84.73 kg TTW
    assert res["S"].co2e_kg == pytest.approx(102.73)
    assert res["S"].co2e_ttw_kg == pytest.approx(84.73)
    assert res["S"].legs[0].co2e_basis == "default intensity"
    assert "default intensities" in res["S"].message


def test_emissions_objective_uses_fuel_figures():
    depots = (Depot("A", "A", 51.0, 6.0), Depot("B", "B", 51.5, 7.0), Depot("C", "C", 51.2, 6.6))
    lanes = (Lane("SHORT", "A", "B", "road", 90.0, 2.0), Lane("AC", "A", "C", "road", 50.0, 0.6),
             Lane("CB", "C", "B", "road", 50.0, 0.6))
    card = RateCard("artic", "road", 1.0, 30.0, 24.0, fuel_l_per_100km=30.0, co2e_kg_per_litre=2.5)
    model = Model(Settings(objective="emissions"), depots, lanes, (card,), (Shipment("S", "A", "B", 5.0),))
    res, _ = run(model)
    # 90 km x 0.30 l/km x 2.5 = 67.5 kg TTW beats 100 km -> 75 kg, although it is slower and
    # dearer (well-to-wheel both x (2.5 + 0.62665) / 2.5: 27 l x 3.12665 = 84.41955 kg)
    assert [leg.use.lane.lane_id for leg in res["S"].legs] == ["SHORT"]
    assert res["S"].co2e_ttw_kg == pytest.approx(67.5)
    assert res["S"].co2e_kg == pytest.approx(84.41955)


def test_fuel_surcharge_hand_calculation():
    depots = (Depot("A", "A", 51.0, 6.0), Depot("B", "B", 51.5, 7.0))
    lanes = (Lane("L", "A", "B", "road", 200.0, 3.0),)
    card = RateCard("artic", "road", 1.0, 30.0, 24.0, fuel_l_per_100km=32.0, fuel_included_at=1.45)
    ship = (Shipment("S", "A", "B", 30.0),)
    model = Model(Settings(fuel_price_per_litre=1.62), depots, lanes, (card,), ship)
    res, _ = run(model)
    leg = res["S"].legs[0]
    # 2 vehicles x 200 km x 32 l/100 km = 128 l; x (1.62 - 1.45) = 0.17 per litre -> 21.76
    assert leg.vehicles == 2 and leg.fuel_surcharge == 21.76
    # fuel cheaper than the rate assumes: a rebate
    model = Model(Settings(fuel_price_per_litre=1.30), depots, lanes, (card,), ship)
    res, _ = run(model)
    assert res["S"].legs[0].fuel_surcharge == -19.20  # 128 l x -0.15


def test_zero_emission_data_is_a_warning_not_a_silent_zero(cli, make_input):
    from tests.conftest import base_data

    data = base_data()
    data["Rates"][0]["co2e_kg_per_litre"] = 0
    code, out, _ = cli("check", make_input(data))
    assert code == 0 and "Rates!H2" in out and "emitting nothing" in out


@pytest.mark.parametrize("seed", range(25))
def test_batched_searches_give_the_same_results(seed, monkeypatch):
    # one one-to-many search per origin group against one A* per shipment: same least weights
    # (both are exact; among routes of exactly equal weight either may be returned)
    import costing.plan.route as route

    model = _random_intermodal(seed)
    rng = random.Random(seed)
    origin = model.shipments[0].origin
    extra = tuple(Shipment(f"X{i}", origin, d.depot_id, rng.choice([3.0, 20.0]), objective=obj)
                  for i, (d, obj) in enumerate((d, rng.choice(["cost", "time", "distance"]))
                                               for d in model.depots) if d.depot_id != origin)
    from dataclasses import replace

    model = replace(model, shipments=model.shipments + extra)
    monkeypatch.setattr(route, "BATCH_MIN", 10**9)
    one_by_one, stats_a, _ = route_all(model)
    monkeypatch.setattr(route, "BATCH_MIN", 2)
    batched, stats_b, _ = route_all(model)
    assert stats_a.batches == 0 and stats_b.batches > 0
    for a, b in zip(one_by_one, batched):
        assert a.status == b.status
        if a.status == "routed":
            assert b.objective_value == pytest.approx(a.objective_value, abs=1e-9)
            assert b.total_cost == pytest.approx(a.total_cost, abs=1e-9) or a.objective != "cost"
