"""Ties of the objective go to the lower cost, then the fewer legs (issue 12).

Sources of truth:
- networkx (reference library): Dijkstra with lexicographic weights encoded as exact Python
  integers (primary x 2**80 + secondary x 2**40 + tertiary), on the same random graphs the search
  core walks with `Lex` triples;
- hand-worked figures on small models (the arithmetic is in the comments);
- the issue's own figures for the example (S022 +57.07 EUR, S015 +82.76 EUR on the artic).
"""

from __future__ import annotations

import math
import random

import networkx as nx
import pytest

from costing.model import Depot, Lane, Model, RateCard, Settings, Shipment
from costing.network.lex import Lex, primary
from costing.network.search import astar, dijkstra_all
from tests.pipeline_helpers import route_all

M1, M2 = 2 ** 80, 2 ** 40


def test_lex_adds_by_part_and_compares_in_order():
    # definition of the lexicographic order (no outside source needed: tuple order)
    a, b = Lex(1.5, 200, 2), Lex(1.5, 100, 7)
    assert a + b == (3.0, 300, 9)
    assert b < a and a > b and not a < a and a <= a
    assert Lex(1.0, 10**9, 10**9) < Lex(1.5, 0, 0)
    assert a < math.inf and not math.inf < a and math.inf > a
    assert 0.0 + a == a and a + 0.25 == (1.75, 200, 2)
    assert Lex(0.0, 0, 1) > 0 and not Lex(0.0, 0, 0) < 0
    assert primary(a) == 1.5 and primary(2.0) == 2.0 and float(a) == 1.5


def _random_graph(seed: int):
    """A random digraph with hours on a 0.25 h grid (exact in binary, so equal sums are equal
    floats), costs in cents, one leg per arc; many equal-hour alternatives."""
    rng = random.Random(seed)
    n = rng.randint(6, 18)
    arcs = []
    for _ in range(rng.randint(n, 4 * n)):
        u, v = rng.sample(range(n), 2)
        arcs.append((u, v, rng.choice((0.25, 0.5, 0.5, 0.75, 1.0)), rng.randint(0, 4) * 250, 1))
    return n, arcs


@pytest.mark.parametrize("seed", range(60))
def test_core_with_lex_weights_matches_networkx_lexicographic(seed):
    n, arcs = _random_graph(seed)
    adj = [[] for _ in range(n)]
    g = nx.DiGraph()
    g.add_nodes_from(range(n))
    for e, (u, v, hours, cents, legs) in enumerate(arcs):
        adj[u].append((v, Lex(hours, cents, legs), e))
        w = round(hours * 4) * M1 + cents * M2 + legs
        if not g.has_edge(u, v) or g[u][v]["w"] > w:
            g.add_edge(u, v, w=w)  # parallel arcs: networkx keeps the lexicographically least
    dist = nx.single_source_dijkstra_path_length(g, 0, weight="w")
    got = dijkstra_all(adj, 0)
    for t in range(n):
        if t not in dist:
            assert got[t] == math.inf
            continue
        want = dist[t]
        lx = Lex(0.0) + got[t]  # the source's own weight is the float 0.0 it started with
        assert (round(lx[0] * 4), lx[1], lx[2]) == (want // M1, want % M1 // M2, want % M2)
        res = astar(adj, 0, t)
        assert Lex(0.0) + res.weight == lx
        # the route's own arcs add up to the weight
        total = Lex(0.0)
        for e in res.edges:
            total = total + adj[arcs[e][0]][[x[2] for x in adj[arcs[e][0]]].index(e)][1]
        assert total == Lex(0.0) + res.weight


@pytest.mark.parametrize("seed", range(20))
def test_core_with_lex_weights_and_a_primary_bound(seed):
    """A consistent bound on the primary (here: the exact remaining hours, from a reverse
    Dijkstra in networkx) keeps the lexicographic optimum."""
    n, arcs = _random_graph(seed)
    adj = [[] for _ in range(n)]
    rev = nx.DiGraph()
    g = nx.DiGraph()
    for e, (u, v, hours, cents, legs) in enumerate(arcs):
        adj[u].append((v, Lex(hours, cents, legs), e))
        if not rev.has_edge(v, u) or rev[v][u]["h"] > hours:
            rev.add_edge(v, u, h=hours)
        w = round(hours * 4) * M1 + cents * M2 + legs
        if not g.has_edge(u, v) or g[u][v]["w"] > w:
            g.add_edge(u, v, w=w)
    t = n - 1
    if t not in rev:
        return
    rem = nx.single_source_dijkstra_path_length(rev, t, weight="h")
    h = [rem.get(v, math.inf) for v in range(n)]
    res = astar(adj, 0, t, h)
    try:
        want = nx.dijkstra_path_length(g, 0, t, weight="w")
    except (nx.NetworkXNoPath, nx.NodeNotFound):
        assert not res.found
        return
    lx = Lex(0.0) + res.weight
    assert (round(lx[0] * 4), lx[1], lx[2]) == (want // M1, want % M1 // M2, want % M2)


# ---------------------------------------------------------------------------------------------
# the product: hand-worked models


def _depots():
    return (Depot("A", "A", 50.0, 4.0), Depot("B", "B", 50.3, 4.3), Depot("C", "C", 50.6, 4.6),
            Depot("D", "D", 50.3, 4.9))


def test_equal_time_goes_to_the_cheaper_vehicle():
    # A -> C over B, 2 x 50 km, 2 x 0.7 h. artic: 50 x 1.00 + 0.7 x 40 = 78.00 per lane;
    # rigid: 50 x 0.80 + 0.7 x 30 = 61.00 per lane. Equal time (1.4 h), rigid cheaper by 34.00.
    lanes = (Lane("L1", "A", "B", "road", 50.0, 0.7), Lane("L2", "B", "C", "road", 50.0, 0.7))
    rates = (RateCard("artic", "road", 1.0, 40.0, 24.0), RateCard("rigid", "road", 0.8, 30.0, 9.0))
    for order in (rates, rates[::-1]):  # whichever card comes first
        model = Model(Settings(objective="time"), _depots(), lanes, order,
                      (Shipment("S1", "A", "C", 5.0),))
        (res,), _st, _p = route_all(model)
        assert res.vehicle == "rigid" and res.total_cost == 122.0  # 2 x 61.00
        assert res.objective_value == pytest.approx(1.4)


def test_equal_time_goes_to_the_lower_toll_then_fewer_legs():
    # A -> C: L1+L2 (0.5 + 0.5 h, toll 20 on L2), L3 direct (1.0 h, toll 0), L4+L5 via D
    # (0.5 + 0.5 h, toll 0). km 0 everywhere and per_hour 0, so cost = tolls only.
    # Equal time 1.0 h; cost 20 / 0 / 0; legs 2 / 1 / 2 -> L3 (cost 0, 1 leg).
    lanes = (Lane("L1", "A", "B", "road", 0.0, 0.5), Lane("L2", "B", "C", "road", 0.0, 0.5, toll=20.0),
             Lane("L4", "A", "D", "road", 0.0, 0.5), Lane("L5", "D", "C", "road", 0.0, 0.5),
             Lane("L3", "A", "C", "road", 0.0, 1.0))
    rates = (RateCard("truck", "road", 1.0, 0.0, 24.0),)
    for objective in ("time", "distance", "emissions"):
        model = Model(Settings(objective=objective), _depots(), lanes, rates,
                      (Shipment("S1", "A", "C", 5.0),))
        (res,), _st, _p = route_all(model)
        assert [leg.use.lane.lane_id for leg in res.legs] == ["L3"], objective
        assert res.total_cost == 0.0


def test_ties_under_the_minimum_charge_compare_totals():
    # 1.6 t, A -> C, equal time on every card. van: payload 1.1 -> 2 vans, 2 lanes x 2 x 50 x 0.40
    # = 80.00, min 65 -> total 80.00. rigid: 2 lanes x 50 x 0.80 = 80.00 (the same subtotal), min
    # 150 -> total 150.00. artic: 2 x 50 x 1.00 = 100.00, min 90 -> 100.00. Least total: the vans.
    lanes = (Lane("L1", "A", "B", "road", 50.0, 0.7), Lane("L2", "B", "C", "road", 50.0, 0.7))
    rates = (RateCard("artic", "road", 1.0, 0.0, 24.0, min_charge=90.0),
             RateCard("rigid", "road", 0.8, 0.0, 9.0, min_charge=150.0),
             RateCard("van", "road", 0.4, 0.0, 1.1, min_charge=65.0))
    model = Model(Settings(objective="time"), _depots(), lanes, rates, (Shipment("S1", "A", "C", 1.6),))
    (res,), _st, _p = route_all(model)
    assert res.vehicle == "van" and res.vehicles == 2 and res.total_cost == 80.0


def test_example_ties_take_the_rigid():
    # issue 12: under the time objective S022 and S015 took the artic when the rigid on the same
    # lanes costs 57.07 and 82.76 EUR less (figures from the issue, reproduced before the fix:
    # 377.56 -> 320.49 and 559.34 -> 476.58)
    from costing import pipeline

    model, _problems, _sha = pipeline.load("examples/hollowmere-week.xlsx")
    results, _st, _p = route_all(model)
    by_id = {r.shipment.shipment_id: r for r in results}
    assert by_id["S022"].vehicle == "rigid_18t"
    assert by_id["S015"].vehicle == "rigid_18t"
