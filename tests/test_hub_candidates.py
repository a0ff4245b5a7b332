"""The plan stage's speed-ups change no plan: a seeded week with consolidation hubs (the
benchmark's week, small) planned with each speed-up switched off gives the same plan digest
(every run's loads, vehicles and cost, every shipment's shares) as with it on.

All inputs are invented (benchmarks.bench_consolidation's seeded week)."""

from __future__ import annotations

from dataclasses import replace
from decimal import ROUND_HALF_UP, Decimal

import networkx as nx
import pytest

import costing.pipeline as pipeline
import costing.plan.week as week
from benchmarks.bench_consolidation import digest, week_model
from costing.plan.route import make_profile


@pytest.fixture(scope="module")
def small_week():
    # 500 depots (5 hubs: more than MAX_HUBS), 300 shipments over five days, half with pallets
    # (invented inputs)
    return week_model(500, 2000, 300, 10, seed=3)


def _run(model, consolidate="yes"):
    m = replace(model, settings=replace(model.settings, consolidate=consolidate))
    return pipeline.run(m, pipeline.Options(analyses=False, scenarios=False))


def _candidates_of(model, monkeypatch):
    """Every shipment's candidate routes (and routes to buy parts of) as plan_week made them."""
    made = []
    candidates = week._candidates  # (possibly a spy of the test's)

    def spy(*a, **k):
        out = candidates(*a, **k)
        made.append(out)
        return out

    monkeypatch.setattr(week, "_candidates", spy)
    costed = _run(model)
    monkeypatch.setattr(week, "_candidates", candidates)
    assert len(made) == 1
    return made[0], digest(costed)


@pytest.fixture(scope="module")
def mixed_week(small_week):
    """The small week with what a half's search depends on varied (invented inputs): a second,
    cheaper road card (two minimum-charge levels, cross-docks at the hubs), loads over one
    artic (two vehicles), dangerous goods, loads named to the rigid, lanes closed to dangerous
    goods and lanes with a weight limit that a loaded artic exceeds."""
    m = small_week
    artic = replace(m.rates[0], tare_t=14.0)
    rigid = replace(m.rates[0], vehicle="rigid", per_km=0.8, per_hour=30.0, per_trip=25.0, payload_t=10.0,
                    pallet_places=14.0, min_charge=90.0, tare_t=7.0, fuel_l_per_100km=22.0)
    ships = tuple(replace(s, weight_t=round(s.weight_t * 1.8, 1) if k % 3 == 0 else s.weight_t,
                          hazmat=k % 5 == 0, vehicle="rigid" if k % 7 == 0 else s.vehicle)
                  for k, s in enumerate(m.shipments))
    lanes = tuple(replace(ln, max_weight_t=30.0 if k % 9 == 0 else ln.max_weight_t,
                          hazmat_allowed=k % 11 != 0) for k, ln in enumerate(m.lanes))
    return replace(m, rates=(artic, rigid), shipments=ships, lanes=lanes)


@pytest.mark.parametrize("switch,which", [("FAST_CANDIDATES", "small_week"), ("SHARE_HALVES", "small_week"),
                                          ("SHARE_HALVES", "mixed_week")])
def test_same_candidates_with_the_switch_off(request, monkeypatch, switch, which):
    model = request.getfixturevalue(which)
    calls = []
    route_of = week._candidates

    def counting(model, route, *a, **k):
        def route_spy(s):
            calls.append(s)
            return route(s)
        return route_of(model, route_spy, *a, **k)

    monkeypatch.setattr(week, "_candidates", counting)
    (cands, bases), fast = _candidates_of(model, monkeypatch)
    fast_calls = len(calls)
    through = sum(len(c) - 1 for c in cands)
    assert through > 100  # the week has routes through hubs to compare
    monkeypatch.setattr(week, switch, False)
    monkeypatch.setattr(week, "_candidates", counting)
    calls.clear()
    (plain_cands, plain_bases), plain = _candidates_of(model, monkeypatch)
    # the same routes through the same hubs, priced to the same floats (dataclass equality)
    assert cands == plain_cands and bases == plain_bases
    assert fast == plain
    if switch == "SHARE_HALVES":
        assert fast_calls < len(calls)  # halves were shared
        if which == "mixed_week":
            # the profile in the key tells apart halves with the same ends and vehicle named
            ends = {}
            for s in calls:
                ends.setdefault((s.origin, s.destination, s.vehicle), set()).add(
                    make_profile(model, s, "cost", list(model.rates)))
            assert sum(len(v) > 1 for v in ends.values()) > 20


def test_hubs_near_kept_distances_are_the_haversine_ones(small_week):
    # the distances kept are those measured afresh; and each is within 0.57 % of the WGS84
    # geodesic (geographiclib, Karney's algorithm: the published bound of the haversine formula
    # on a sphere of radius 6371 km against the ellipsoid; costing.geo's docstring)
    from geographiclib.geodesic import Geodesic

    model = small_week
    hubs = [d.depot_id for d in model.depots if d.kind == "hub"]
    km: dict = {}
    results = _run(model, "no").results
    for res in results[:60]:
        if res.status != "routed":
            continue
        kept = week._hubs_near(model, res, hubs, set(), km)
        assert kept == week._hubs_near(model, res, hubs, set())
    assert km
    for (a, b), d in km.items():
        x, y = model.depot(a), model.depot(b)
        g = Geodesic.WGS84.Inverse(x.latitude, x.longitude, y.latitude, y.longitude)["s12"] / 1000
        assert abs(d - g) <= 0.0057 * g + 1e-9


def _cents(x: float) -> Decimal:
    """Half away from zero to the cent, as a spreadsheet's ROUND (Decimal; ISO 4217: EUR has 2)."""
    return Decimal(repr(x)).quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)


def test_routes_through_hubs_join_the_cheapest_halves(small_week, monkeypatch):
    # each route through a hub (halves shared between shipments) runs a least-cost way to the
    # hub and a least-cost way on from it: its lane charges equal networkx's shortest distances
    # (Dijkstra) to and from one of its hubs. Lane charge of one artic (the week's one card, every
    # load at most 24 t and 26 pallets: one vehicle): ROUND(km x per_km) + ROUND(hours x per_hour)
    # + toll, computed here with Decimal (no fuel price, no driving rules in the week)
    model = small_week
    card = model.rates[0]
    graph = nx.DiGraph()
    for ln in model.lanes:
        w = _cents(ln.distance_km * card.per_km) + _cents(ln.drive_hours * card.per_hour) + _cents(ln.toll)
        for a, b in [(ln.from_depot, ln.to_depot)] + ([(ln.to_depot, ln.from_depot)] if ln.two_way else []):
            if not graph.has_edge(a, b) or graph[a][b]["w"] > w:
                graph.add_edge(a, b, w=w)
    hubs = {d.depot_id for d in model.depots if d.kind == "hub"}
    (cands, _bases), _ = _candidates_of(model, monkeypatch)
    checked = 0
    for c in cands:
        for via in c[1:]:
            s = via.shipment
            charges = sum(Decimal(repr(g.km_cost)) + Decimal(repr(g.hour_cost)) + Decimal(repr(g.toll_cost))
                          for g in via.legs)
            stops = [g.use.to_depot for g in via.legs[:-1]]
            assert any(charges == nx.dijkstra_path_length(graph, s.origin, h, weight="w")
                       + nx.dijkstra_path_length(graph, h, s.destination, weight="w")
                       for h in stops if h in hubs)
            checked += 1
    assert checked > 100
